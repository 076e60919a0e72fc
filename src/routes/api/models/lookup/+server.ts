// Intake's suggestion: `{ model }` with the notebook's path, job count and last complaint when the
// shop has seen this make and model before, `{ model: null }` when not.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, json, readQuery } from '$lib/server/api';
import { lookupModel } from '$lib/server/notebook';
import { modelLookupSchema } from '$lib/schemas/notebook';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	const { make, model } = readQuery(event.url, modelLookupSchema);
	return json({ model: lookupModel(db, make, model) });
});
