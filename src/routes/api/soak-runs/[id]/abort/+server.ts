// Abort a running soak with a reason and the moment (a breach, or the technician stopping it).
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { idParam, json, readJson } from '$lib/server/api';
import { abortRun, abortSchema, soakFail } from '$lib/server/soak';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = async (event) => {
	requireUser(event);
	const id = idParam(event.params.id, 'soak run');
	const input = await readJson(event, abortSchema);
	try {
		return json(abortRun(db, id, input));
	} catch (e) {
		soakFail(e);
	}
};
