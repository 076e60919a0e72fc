// One model's notebook as JSON: jobs, parts by designator, notes and their history, documents
// and typical figures. `make` and `model` may be spelled any way; 404 when the shop has no record.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, json } from '$lib/server/api';
import { getNotebook } from '$lib/server/notebook';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	return json(getNotebook(db, event.params.make, event.params.model));
});
