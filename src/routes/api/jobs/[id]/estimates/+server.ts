// A job's estimate: every version with the customer's decisions and the shop's current pricing
// (GET); save the draft, starting a new version when the last one was sent (POST).
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json, readJson } from '$lib/server/api';
import { requireJob } from '$lib/server/jobs';
import { currentPricing, listEstimates, saveEstimateDraft } from '$lib/server/estimates';
import { estimateDraftSchema } from '$lib/schemas/estimates';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	const jobId = idParam(event.params.id, 'job');
	requireJob(db, jobId);
	return json({ pricing: currentPricing(db), estimates: listEstimates(db, jobId) });
});

export const POST: RequestHandler = endpoint(async (event) => {
	const user = requireUser(event);
	const jobId = idParam(event.params.id, 'job');
	const input = await readJson(event, estimateDraftSchema);
	return json(saveEstimateDraft(db, jobId, input, user), { status: 201 });
});
