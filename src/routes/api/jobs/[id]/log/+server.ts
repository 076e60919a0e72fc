// Add a work-log entry (what was done, minutes spent) to a job as the signed-in user.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json, readJson } from '$lib/server/api';
import { addLogEntry } from '$lib/server/jobs';
import { logEntrySchema } from '$lib/schemas/jobs';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async (event) => {
	const user = requireUser(event);
	const id = idParam(event.params.id, 'job');
	const input = await readJson(event, logEntrySchema);
	return json(addLogEntry(db, id, input, user.id), { status: 201 });
});
