// Abort a running soak with a reason and the moment (a breach, or the technician stopping it).
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json, readJson } from '$lib/server/api';
import { abortRun, abortSchema } from '$lib/server/soak';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async (event) => {
	const user = requireUser(event);
	const id = idParam(event.params.id, 'soak run');
	const input = await readJson(event, abortSchema);
	return json(abortRun(db, id, input, Date.now(), user.id));
});
