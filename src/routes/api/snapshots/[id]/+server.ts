// One snapshot with everything stored: results and conditions, checks, spectrum, settings.
import { error } from '@sveltejs/kit';
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { idParam, json } from '$lib/server/api';
import { getSnapshot } from '$lib/server/snapshots';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = (event) => {
	requireUser(event);
	const snapshot = getSnapshot(db, idParam(event.params.id, 'snapshot'));
	if (!snapshot) error(404, 'No such snapshot');
	return json(snapshot);
};
