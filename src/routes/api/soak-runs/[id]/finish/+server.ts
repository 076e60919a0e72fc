// Finish a soak that reached its duration; the server computes the verdict from stored readings.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json, requireSameOrigin } from '$lib/server/api';
import { finishRun } from '$lib/server/soak';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint((event) => {
	const user = requireUser(event);
	requireSameOrigin(event);
	const id = idParam(event.params.id, 'soak run');
	return json(finishRun(db, id, Date.now(), user.id));
});
