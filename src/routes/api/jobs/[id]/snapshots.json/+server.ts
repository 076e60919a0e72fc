// A job's snapshot figures as JSON: the same rows as the CSV export, with the column headers.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json } from '$lib/server/api';
import { CSV_COLUMNS, snapshotFigureRows } from '$lib/server/exports';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	const jobId = idParam(event.params.id, 'job');
	return json({ columns: CSV_COLUMNS, rows: snapshotFigureRows(db, jobId) });
});
