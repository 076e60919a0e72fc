// The compare page of one job: its snapshots to pick from, and the picked ids from `?s=` checked
// here (malformed, more than allowed, or another job's: a 400 that says what is allowed). The
// figures themselves are fetched by the page from GET /api/jobs/{id}/compare as picks change.
import { db } from '$lib/server/db';
import { DomainError } from '$lib/server/errors';
import { requireUser } from '$lib/server/guards';
import { idParam } from '$lib/server/api';
import { pageLoad } from '$lib/server/handlers';
import { jobHeading, listComparable } from '$lib/server/compare';
import { MAX_COMPARE, parseSelection } from '$lib/compare';
import { worksheetSummary } from '$lib/server/worksheets';
import { getSetting } from '$lib/server/settings';
import { listProcedureRuns } from '$lib/server/procedures';
import { placeJob } from '$lib/server/notebook';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = pageLoad((event) => {
	requireUser(event);
	const jobId = idParam(event.params.id, 'job');
	const job = jobHeading(db, jobId);
	if (!job) throw new DomainError('not-found', 'No such job');
	const snapshots = listComparable(db, jobId);
	const picked = parseSelection(event.url.searchParams.get('s'));
	if (picked === null)
		throw new DomainError(
			'invalid',
			'The snapshots to compare are given as ids separated by commas: ?s=12,15',
			[{ path: 's', message: 'snapshot ids separated by commas' }]
		);
	if (picked.length > MAX_COMPARE)
		throw new DomainError(
			'invalid',
			`At most ${MAX_COMPARE} snapshots can be compared at once; ${picked.length} were picked`,
			[{ path: 's', message: `1 to ${MAX_COMPARE} snapshots` }]
		);
	const known = new Set(snapshots.map((s) => s.id));
	const foreign = picked.filter((id) => !known.has(id));
	if (foreign.length)
		throw new DomainError(
			'invalid',
			`Snapshot${foreign.length === 1 ? '' : 's'} ${foreign.join(', ')} ${foreign.length === 1 ? 'is' : 'are'} not part of job ${jobId}; only this job’s snapshots can be compared`,
			foreign.map((id) => ({ path: 's', message: `snapshot ${id} is not a snapshot of job ${jobId}` }))
		);
	return {
		job,
		snapshots,
		picked,
		// The bench worksheets beside the measurements (intake, power-up, bias, safety).
		worksheets: worksheetSummary(db, jobId),
		worksheetSettings: getSetting(db, 'worksheets'),
		// The bench procedures on record (sweeps, phono equalisation, maximum power), newest first.
		procedures: listProcedureRuns(db, jobId, { limit: 20 }),
		// Where the newest after-repair snapshot sits among repaired units of this model.
		placement: placeJob(db, jobId)
	};
});
