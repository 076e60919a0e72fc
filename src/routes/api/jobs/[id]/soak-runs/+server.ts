// A job's soak runs: list them (with a small chart each) and start one from a preset.
import { error } from '@sveltejs/kit';
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { idParam, json, readJson } from '$lib/server/api';
import { jobExists } from '$lib/server/jobs';
import { createRun, createRunSchema, listRuns, soakFail } from '$lib/server/soak';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = (event) => {
	requireUser(event);
	const jobId = idParam(event.params.id, 'job');
	if (!jobExists(db, jobId)) error(404, 'No such job');
	return json({ runs: listRuns(db, jobId) });
};

export const POST: RequestHandler = async (event) => {
	const user = requireUser(event);
	const jobId = idParam(event.params.id, 'job');
	const input = await readJson(event, createRunSchema);
	try {
		return json(createRun(db, jobId, user.id, input), { status: 201 });
	} catch (e) {
		soakFail(e);
	}
};
