// Reopen a signed-off (approved or returned) job with a reason: supervisors and admins only.
// The job goes back to review (or to diagnosis when it had been returned); the history says
// who reopened it and why. 409 for a job that is not signed off.
import { db } from '$lib/server/db';
import { requireSupervisor } from '$lib/server/guards';
import { endpoint, idParam, json, readJson } from '$lib/server/api';
import { reopenJob } from '$lib/server/jobs';
import { reopenSchema } from '$lib/schemas/job-lock';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async (event) => {
	const user = requireSupervisor(event);
	const id = idParam(event.params.id, 'job');
	const input = await readJson(event, reopenSchema);
	return json(reopenJob(db, id, input, user));
});
