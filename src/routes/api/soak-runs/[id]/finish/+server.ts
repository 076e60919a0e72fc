// Finish a soak that reached its duration; the server computes the verdict from stored readings.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { idParam, json, requireSameOrigin } from '$lib/server/api';
import { finishRun, soakFail } from '$lib/server/soak';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = (event) => {
	requireUser(event);
	requireSameOrigin(event);
	const id = idParam(event.params.id, 'soak run');
	try {
		return json(finishRun(db, id));
	} catch (e) {
		soakFail(e);
	}
};
