// A job's soak runs: list them (with a small chart each) and start one from a preset.
import { db } from '$lib/server/db';
import { DomainError } from '$lib/server/errors';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json, readJson } from '$lib/server/api';
import { jobExists } from '$lib/server/jobs';
import { createRun, createRunSchema, listRuns } from '$lib/server/soak';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	const jobId = idParam(event.params.id, 'job');
	if (!jobExists(db, jobId)) throw new DomainError('not-found', 'No such job');
	return json({ runs: listRuns(db, jobId) });
});

export const POST: RequestHandler = endpoint(async (event) => {
	const user = requireUser(event);
	const jobId = idParam(event.params.id, 'job');
	const input = await readJson(event, createRunSchema);
	return json(createRun(db, jobId, user.id, input), { status: 201 });
});
