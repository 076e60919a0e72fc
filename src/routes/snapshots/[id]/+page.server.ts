// One snapshot, readable: everything stored about it, for any signed-in user. The JSON stays at
// GET /api/snapshots/{id}; this page shows the same record with units and reasons.
import { db } from '$lib/server/db';
import { DomainError } from '$lib/server/errors';
import { requireUser } from '$lib/server/guards';
import { idParam } from '$lib/server/api';
import { pageLoad } from '$lib/server/handlers';
import { getSnapshot } from '$lib/server/snapshots';
import { jobHeading } from '$lib/server/compare';
import { placeSnapshot } from '$lib/server/notebook';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = pageLoad((event) => {
	requireUser(event);
	const snapshot = getSnapshot(db, idParam(event.params.id, 'snapshot'));
	if (!snapshot) throw new DomainError('not-found', 'No such snapshot');
	// Where this unit sits among repaired units of its model (the model notebook's typical figures).
	return { snapshot, job: jobHeading(db, snapshot.jobId), placement: placeSnapshot(db, snapshot.id) };
});
