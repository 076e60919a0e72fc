// The snapshots picked for a comparison, in full (results, checks, spectra), oldest first.
// `?s=ID,ID,…`: 1 to 6 snapshots of this job; more, malformed ids or another job's snapshots are a 400.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json, readQuery } from '$lib/server/api';
import { compareQuerySchema, getComparison } from '$lib/server/compare';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	const jobId = idParam(event.params.id, 'job');
	const { s } = readQuery(event.url, compareQuerySchema);
	return json(getComparison(db, jobId, s));
});
