// A job's snapshot figures as CSV: one row per snapshot and channel, units in the headers.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam } from '$lib/server/api';
import { snapshotFigureRows, snapshotFiguresCsv } from '$lib/server/exports';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	const jobId = idParam(event.params.id, 'job');
	const csv = snapshotFiguresCsv(snapshotFigureRows(db, jobId));
	return new Response(csv, {
		headers: {
			'content-type': 'text/csv; charset=utf-8; header=present',
			'content-disposition': `attachment; filename="job-${jobId}-snapshots.csv"`,
			'x-content-type-options': 'nosniff',
			'cache-control': 'private, no-store'
		}
	});
});
