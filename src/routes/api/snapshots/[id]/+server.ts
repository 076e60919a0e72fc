// One snapshot with everything stored: results and conditions, checks, spectrum, settings.
import { db } from '$lib/server/db';
import { DomainError } from '$lib/server/errors';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json } from '$lib/server/api';
import { getSnapshot } from '$lib/server/snapshots';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	const snapshot = getSnapshot(db, idParam(event.params.id, 'snapshot'));
	if (!snapshot) throw new DomainError('not-found', 'No such snapshot');
	return json(snapshot);
});
