// One bench worksheet of a job (intake, power-up, bias, safety): the sheet with its version and
// history, the job's worksheet summary, and the shop's figures it is judged against. Saving goes
// through PUT /api/jobs/[id]/worksheets/[kind] (optimistic version check there).
import { db } from '$lib/server/db';
import { DomainError } from '$lib/server/errors';
import { requireUser } from '$lib/server/guards';
import { idParam } from '$lib/server/api';
import { getJob, isLockedStatus } from '$lib/server/jobs';
import { getSetting } from '$lib/server/settings';
import { getWorksheet, worksheetHistory, worksheetSummary } from '$lib/server/worksheets';
import { worksheetKindSchema, WORKSHEET_KINDS } from '$lib/schemas/worksheets';
import { pageLoad } from '$lib/server/handlers';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = pageLoad((event) => {
	requireUser(event);
	const id = idParam(event.params.id, 'job');
	const kind = worksheetKindSchema.safeParse(event.params.kind);
	if (!kind.success)
		throw new DomainError('not-found', `No such worksheet: use one of ${WORKSHEET_KINDS.join(', ')}`);
	const job = getJob(db, id);
	if (!job) throw new DomainError('not-found', 'No such job');
	return {
		job: {
			id: job.id,
			make: job.make,
			model: job.model,
			category: job.category,
			status: job.status,
			ratedPowerW: job.ratedPowerW
		},
		locked: isLockedStatus(job.status),
		kind: kind.data,
		sheet: getWorksheet(db, id, kind.data),
		history: worksheetHistory(db, id, kind.data),
		summary: worksheetSummary(db, id),
		settings: getSetting(db, 'worksheets')
	};
});
