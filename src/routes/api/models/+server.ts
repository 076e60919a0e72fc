// Models the shop has seen (the notebook's search): `q` matches make and model however typed.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, json, readQuery } from '$lib/server/api';
import { listModels } from '$lib/server/notebook';
import { modelSearchSchema } from '$lib/schemas/notebook';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	return json(listModels(db, readQuery(event.url, modelSearchSchema)));
});
