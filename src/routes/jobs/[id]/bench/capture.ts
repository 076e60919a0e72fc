// The bench's capture side effects: whether a capture may be taken now (only from live audio on
// a connected link), and the upload of the captured WAV and its metadata to the server, which
// analyses it again and judges it. The page only calls these.
import type { Check } from '$lib/limit-profiles';
import type { LinkStatus } from '$lib/state/bridge-link.svelte';
import type { SnapshotStageView } from '$lib/snapshots/types';

/** A frame older than this means the stream has stalled: the audio behind the readouts is not live. */
export const STALE_FRAME_MS = 1000;

export interface CaptureGate {
	status: LinkStatus;
	/** Age of the newest sample frame in ms, null before the first one. */
	frameAgeMs: number | null;
	/** True once the analysis has produced readouts from this stream. */
	hasReadouts: boolean;
}

/**
 * Why a capture cannot be taken now, as a sentence for the page; null when it can. A snapshot
 * is a record of the unit as it is, so it must come from audio that is arriving now.
 */
export function captureBlockedReason(g: CaptureGate): string | null {
	if (g.status !== 'connected') {
		const state =
			g.status === 'reconnecting' || g.status === 'connecting'
				? 'the link to the bridge is down (reconnecting)'
				: 'the page is not connected to the bridge';
		return `Capture is off: ${state}. A snapshot is taken only from live audio.`;
	}
	if (g.frameAgeMs === null) return 'Capture is off: no audio has arrived from the bridge yet.';
	if (g.frameAgeMs > STALE_FRAME_MS)
		return `Capture is off: the newest audio is ${(g.frameAgeMs / 1000).toFixed(1)} s old (limit ${STALE_FRAME_MS / 1000} s); the stream has stalled.`;
	if (!g.hasReadouts) return 'Capture is off: waiting for the first readings.';
	return null;
}

export interface UploadedSnapshot {
	id: number;
	verdict: 'pass' | 'fail' | 'none';
	checks: Check[];
}

/** What the server stores beside the audio; see the snapshot meta schema in `$lib/server/snapshots`. */
export interface SnapshotMeta {
	label: string;
	stage: SnapshotStageView;
	profileId: number | null;
	[key: string]: unknown;
}

/**
 * Send one capture to the job's snapshot endpoint. Resolves with the server's verdict or throws
 * an Error carrying the server's own message (what is wrong and what is allowed).
 */
export async function uploadSnapshot(
	jobId: number,
	wav: ArrayBuffer,
	meta: SnapshotMeta,
	fetcher: typeof fetch = fetch
): Promise<UploadedSnapshot> {
	const form = new FormData();
	form.set('samples', new Blob([wav], { type: 'audio/wav' }), `job-${jobId}-${meta.stage}.wav`);
	form.set('meta', JSON.stringify(meta));
	const res = await fetcher(`/api/jobs/${jobId}/snapshots`, { method: 'POST', body: form });
	let body: { id?: number; verdict?: 'pass' | 'fail' | 'none'; checks?: Check[]; message?: string } = {};
	try {
		body = (await res.json()) as typeof body;
	} catch {
		/* not JSON: the status line below says what happened */
	}
	if (!res.ok || typeof body.id !== 'number')
		throw new Error(body.message ?? `The server refused the snapshot (${res.status})`);
	return { id: body.id, verdict: body.verdict ?? 'none', checks: body.checks ?? [] };
}
