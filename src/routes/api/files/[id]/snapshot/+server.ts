// Make a snapshot from an uploaded WAV: the body is the bench capture's `meta` (label, stage,
// profile …) as JSON; the snapshot is made through the same server path as a bench capture.
import { db } from '$lib/server/db';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam, json, readJson } from '$lib/server/api';
import { fileSnapshotSchema } from '$lib/schemas/job-files';
import { analysisPool } from '$lib/server/analysis-pool';
import { createSnapshotInPool } from '$lib/server/snapshots';
import { snapshotFromFile } from '$lib/server/job-files';
import { appStore } from '$lib/server/app-store';
import type { RequestHandler } from './$types';

export const POST: RequestHandler = endpoint(async (event) => {
	const user = requireUser(event);
	const id = idParam(event.params.id, 'file');
	const meta = await readJson(event, fileSnapshotSchema);
	// A place in the analysis pool first: a full pool answers 503 + Retry-After.
	const reservation = analysisPool().reserve();
	try {
		const created = await snapshotFromFile(db, appStore(), id, user.id, meta, (input) =>
			createSnapshotInPool(db, input, reservation)
		);
		return json(created, { status: 201 });
	} finally {
		reservation.release();
	}
});
