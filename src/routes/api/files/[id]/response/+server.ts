// Read a WAV among a job's files as a recorded stepped sweep: the response per step and channel
// (and the deviation from the RIAA curve), the same figures as `npm run analyze -- --response`.
// The analysis runs in the analysis pool; a full pool answers 503 + Retry-After.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json, readJson } from '$lib/server/api';
import { fileResponseSchema } from '$lib/schemas/procedures';
import { analysisPool } from '$lib/server/analysis-pool';
import { responseFromFile } from '$lib/server/procedures';
import { appStore } from '$lib/server/app-store';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async (event) => {
	requireUser(event);
	const id = idParam(event.params.id, 'file');
	const input = await readJson(event, fileResponseSchema);
	const reservation = analysisPool().reserve();
	try {
		return json(await responseFromFile(db, appStore(), id, input, (task) => reservation.sweep(task)));
	} finally {
		reservation.release();
	}
});
