// One soak run: the run, its limits, how many readings are stored, verdict, summary and events.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json } from '$lib/server/api';
import { getRunDetail } from '$lib/server/soak';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	const id = idParam(event.params.id, 'soak run');
	return json(getRunDetail(db, id), { headers: { 'cache-control': 'no-store' } });
});
