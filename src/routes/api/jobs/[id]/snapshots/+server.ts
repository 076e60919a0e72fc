// A job's snapshots: list them, or capture one from a multipart upload (`samples` WAV + `meta`
// JSON). The server re-analyses the WAV itself on a worker thread; see $lib/server/snapshots.
import { db } from '$lib/server/db';
import { DomainError } from '$lib/server/errors';
import { requireUser } from '$lib/server/guards';
import { badRequest, endpoint, idParam, json, readBodyCapped, requireSameOrigin } from '$lib/server/api';
import { analysisPool } from '$lib/server/analysis-pool';
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
	if (!/^multipart\/form-data\b/i.test(type))
		throw new DomainError(
			'unsupported-type',
			'Send the snapshot as multipart/form-data with `samples` and `meta`'
		);

	// A place in the analysis pool before the body is read: a full pool answers 503 + Retry-After.
	const reservation = analysisPool().reserve();
	try {
		const bytes = await readBodyCapped(event.request, SNAPSHOT_MAX_WAV_BYTES + MULTIPART_OVERHEAD_BYTES);
		let form: FormData;
		try {
			form = await new Response(bytes as Uint8Array<ArrayBuffer>, {
				headers: { 'content-type': type }
			}).formData();
		} catch {
			badRequest('The body is not valid multipart/form-data');
		}
		const samples = form.get('samples');
		if (!(samples instanceof Blob)) badRequest('samples: attach the WAV file as the `samples` part');
		if (samples.size > SNAPSHOT_MAX_WAV_BYTES)
			throw new DomainError(
				'too-large',
				`samples: the WAV file is larger than ${SNAPSHOT_MAX_WAV_BYTES} bytes`
			);
		const meta = form.get('meta');
		if (typeof meta !== 'string')
			badRequest('meta: send the snapshot details as the `meta` part (JSON text)');

		const created = await createSnapshotInPool(
			db,
			{ jobId, userId: user.id, wav: new Uint8Array(await samples.arrayBuffer()), meta },
			reservation
		);
		return json(created, { status: 201 });
	} finally {
		// Harmless after a run (which releases its own place); frees it on every early refusal.
		reservation.release();
	}
});
