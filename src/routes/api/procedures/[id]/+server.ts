// One recorded bench procedure with its conditions, raw readings, figures and verdict.
import { db } from '$lib/server/db';
import { DomainError } from '$lib/server/errors';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json } from '$lib/server/api';
import { getProcedureRun } from '$lib/server/procedures';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	const run = getProcedureRun(db, idParam(event.params.id, 'procedure'));
	if (!run) throw new DomainError('not-found', 'No such procedure');
	return json(run);
});
