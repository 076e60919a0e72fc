// A job's snapshots: list them, or capture one from a multipart upload (`samples` WAV + `meta`
// JSON). The server re-analyses the WAV itself on a worker thread; see $lib/server/snapshots.
import { db } from '$lib/server/db';
import { DomainError } from '$lib/server/errors';
import { requireUser } from '$lib/server/guards';
import { badRequest, endpoint, idParam, json, readBodyCapped, requireSameOrigin } from '$lib/server/api';
import { analysisPool } from '$lib/server/analysis-pool';
import { multipartBoundary, parseMultipart } from '$lib/server/multipart';
import { assertJobOpen, jobExists } from '$lib/server/jobs';
import { createSnapshotInPool, listSnapshots, SNAPSHOT_MAX_WAV_BYTES } from '$lib/server/snapshots';
import type { RequestHandler } from './$types';

/** Room for the multipart boundaries and the meta part beside the largest WAV. */
const MULTIPART_OVERHEAD_BYTES = 256 * 1024;

export const GET: RequestHandler = endpoint((event) => {
	requireUser(event);
	const jobId = idParam(event.params.id, 'job');
	if (!jobExists(db, jobId)) throw new DomainError('not-found', 'No such job');
	return json({ snapshots: listSnapshots(db, jobId) });
});

export const POST: RequestHandler = endpoint(async (event) => {
	const user = requireUser(event);
	requireSameOrigin(event);
	const jobId = idParam(event.params.id, 'job');
	// 404 / 409 (signed off) before anything is read.
	assertJobOpen(db, jobId);
	const type = event.request.headers.get('content-type') ?? '';
	const boundary = multipartBoundary(type);
	if (!/^multipart\/form-data\b/i.test(type))
		throw new DomainError(
			'unsupported-type',
			'Send the snapshot as multipart/form-data with `samples` and `meta`'
		);

	// A place in the analysis pool before the body is read: a full pool answers 503 + Retry-After.
	const reservation = analysisPool().reserve();
	try {
		const bytes = await readBodyCapped(event.request, SNAPSHOT_MAX_WAV_BYTES + MULTIPART_OVERHEAD_BYTES);
		const parts = boundary === null ? null : parseMultipart(bytes, boundary);
		if (!parts) badRequest('The body is not valid multipart/form-data');
		const samples = parts.find((p) => p.name === 'samples');
		if (!samples || samples.filename === undefined)
			badRequest('samples: attach the WAV file as the `samples` part');
		if (samples.data.byteLength > SNAPSHOT_MAX_WAV_BYTES)
			throw new DomainError(
				'too-large',
				`samples: the WAV file is larger than ${SNAPSHOT_MAX_WAV_BYTES} bytes`
			);
		const metaPart = parts.find((p) => p.name === 'meta');
		if (!metaPart || metaPart.filename !== undefined)
			badRequest('meta: send the snapshot details as the `meta` part (JSON text)');
		const meta = new TextDecoder().decode(metaPart.data);

		const created = await createSnapshotInPool(
			db,
			{ jobId, userId: user.id, wav: samples.data, meta },
			reservation
		);
		return json(created, { status: 201 });
	} finally {
		// Harmless after a run (which releases its own place); frees it on every early refusal.
		reservation.release();
	}
});
