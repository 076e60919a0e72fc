// Add a part (by reference designator) to a job.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json, readJson } from '$lib/server/api';
import { addPart } from '$lib/server/jobs';
import { partSchema } from '$lib/schemas/jobs';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async (event) => {
	const user = requireUser(event);
	const id = idParam(event.params.id, 'job');
	const input = await readJson(event, partSchema);
	return json(addPart(db, id, input, user.id), { status: 201 });
});
