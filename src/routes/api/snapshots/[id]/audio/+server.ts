// The raw WAV a snapshot was computed from, for re-analysis (e.g. `npm run analyze`).
import { db } from '$lib/server/db';
import { DomainError } from '$lib/server/errors';
import { requireUser } from '$lib/server/guards';
import { endpoint, idParam } from '$lib/server/api';
import { getSnapshotAudio } from '$lib/server/snapshots';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = endpoint(async (event) => {
	requireUser(event);
	const id = idParam(event.params.id, 'snapshot');
	const audio = await getSnapshotAudio(db, id);
	if (!audio) throw new DomainError('not-found', 'No such snapshot');
	return new Response(new Uint8Array(audio.wav), {
		headers: {
			'content-type': 'audio/wav',
			'content-length': String(audio.wav.byteLength),
			'content-disposition': `attachment; filename="job-${audio.jobId}-snapshot-${id}.wav"`,
			etag: `"${audio.sha256}"`,
			// Never kept in the browser cache: on a shared bench PC it would outlive the sign-out.
			'cache-control': 'private, no-store'
		}
	});
});
