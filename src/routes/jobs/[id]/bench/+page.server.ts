// The bench page for one job: the job's headline, the active limit profiles and its snapshots.
// Live data comes from the bridge in the browser; captures go to /api/jobs/[id]/snapshots.
import { db } from '$lib/server/db';
import { DomainError } from '$lib/server/errors';
import { requireUser } from '$lib/server/guards';
import { idParam } from '$lib/server/api';
import { getJob } from '$lib/server/jobs';
import { listLimitProfiles } from '$lib/server/limit-profiles';
import { getSetting } from '$lib/server/settings';
import { worksheetSummary } from '$lib/server/worksheets';
import { pageLoad } from '$lib/server/handlers';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = pageLoad((event) => {
	requireUser(event);
	const id = idParam(event.params.id, 'job');
	const job = getJob(db, id);
	if (!job) throw new DomainError('not-found', 'No such job');
	return {
		job: {
			id: job.id,
			make: job.make,
			model: job.model,
			category: job.category,
			serial: job.serial,
			complaint: job.complaint,
			status: job.status,
			customerName: job.customer.name,
			ratedPowerW: job.ratedPowerW,
			ratedLoadOhms: job.ratedLoadOhms
		},
		profiles: listLimitProfiles(db),
		// The shop's mains frequency names the hum orders the live analysis reports.
		mainsHz: getSetting(db, 'mainsHz'),
		// A long-stored unit: no generator until its first power-up sheet is complete. The bridge is
		// a separate process, so this gate is the page's; the server refuses captures and soaks.
		gate: worksheetSummary(db, id).gate
	};
});
