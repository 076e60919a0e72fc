// The soak page of a job: the job's rating for the presets, the shop's default limits, and the
// run to show (the job's running run, resumed, or one named in ?run=).
import { db } from '$lib/server/db';
import { DomainError } from '$lib/server/errors';
import { requireUser } from '$lib/server/guards';
import { idParam } from '$lib/server/api';
import { getJob } from '$lib/server/jobs';
import { getSetting } from '$lib/server/settings';
import { jobIdOfRun, runningRunId } from '$lib/server/soak';
import { pageLoad } from '$lib/server/handlers';
import { worksheetSummary } from '$lib/server/worksheets';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = pageLoad((event) => {
	requireUser(event);
	const id = idParam(event.params.id, 'job');
	const job = getJob(db, id);
	if (!job) throw new DomainError('not-found', 'No such job');
	let viewRunId: number | null = null;
	const runParam = event.url.searchParams.get('run');
	if (runParam !== null) {
		const runId = idParam(runParam, 'soak run');
		// jobIdOfRun throws not-found for an unknown run, which the wrapper answers with a 404.
		if (jobIdOfRun(db, runId) !== id) throw new DomainError('not-found', 'No such soak run on this job');
		viewRunId = runId;
	}
	return {
		job: {
			id: job.id,
			make: job.make,
			model: job.model,
			serial: job.serial,
			category: job.category,
			customerName: job.customer.name,
			ratedPowerW: job.ratedPowerW,
			ratedLoadOhms: job.ratedLoadOhms,
			ratedPowerBasis: job.ratedPowerBasis,
			ratedThdPercent: job.ratedThdPercent,
			unrestored: job.unrestored,
			year: job.year
		},
		shopLimits: getSetting(db, 'soakDefaultLimits'),
		runningRunId: runningRunId(db, id),
		viewRunId,
		// A long-stored unit before its first power-up: the server refuses the start; the page says why first.
		gate: worksheetSummary(db, id).gate
	};
});
