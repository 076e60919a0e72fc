// One job: its detail (customer, technician, history, work log, parts) and edits.
import { db } from '$lib/server/db';
import { DomainError } from '$lib/server/errors';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json, readJson } from '$lib/server/api';
import { getJob, updateJob } from '$lib/server/jobs';
import { jobPatchSchema } from '$lib/schemas/jobs';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	const job = getJob(db, idParam(event.params.id, 'job'));
	if (!job) throw new DomainError('not-found', 'No such job');
	return json(job);
});

export const PATCH: RequestHandler = endpoint(async (event) => {
	const user = requireUser(event);
	const id = idParam(event.params.id, 'job');
	const patch = await readJson(event, jobPatchSchema);
	return json(updateJob(db, id, patch, user.id));
});
