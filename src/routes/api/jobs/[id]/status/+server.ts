// Move a job along its status path; approval needs a supervisor or admin (403 otherwise),
// a move the path does not allow answers 409.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json, readJson } from '$lib/server/api';
import { changeStatus } from '$lib/server/jobs';
import { statusChangeSchema } from '$lib/schemas/jobs';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async (event) => {
	const user = requireUser(event);
	const id = idParam(event.params.id, 'job');
	const input = await readJson(event, statusChangeSchema);
	return json(changeStatus(db, id, input, user));
});
