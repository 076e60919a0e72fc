import { describe, expect, it, vi } from 'vitest';
import { captureBlockedReason, STALE_FRAME_MS, uploadSnapshot } from './capture';

describe('captureBlockedReason', () => {
	const live = { status: 'connected' as const, frameAgeMs: 40, hasReadouts: true };

	it('allows a capture from a connected link with fresh audio and readouts', () => {
		expect(captureBlockedReason(live)).toBeNull();
		expect(captureBlockedReason({ ...live, frameAgeMs: STALE_FRAME_MS })).toBeNull();
	});

	it('refuses while the link is down, whatever the last frame was', () => {
		for (const status of ['idle', 'connecting', 'reconnecting', 'closed'] as const)
			expect(captureBlockedReason({ ...live, status }), status).toMatch(
				/^Capture is off: .*(bridge|reconnecting)/
			);
		expect(captureBlockedReason({ ...live, status: 'reconnecting' })).toContain('link to the bridge is down');
	});

	it('refuses when the newest frame is older than one second, and says how old', () => {
		expect(captureBlockedReason({ ...live, frameAgeMs: 1001 })).toBe(
			'Capture is off: the newest audio is 1.0 s old (limit 1 s); the stream has stalled.'
		);
		expect(captureBlockedReason({ ...live, frameAgeMs: 4500 })).toContain('4.5 s old');
	});

	it('refuses before any audio or readings', () => {
		expect(captureBlockedReason({ ...live, frameAgeMs: null })).toContain('no audio has arrived');
		expect(captureBlockedReason({ ...live, hasReadouts: false })).toContain('waiting for the first readings');
	});
});

describe('uploadSnapshot', () => {
	const meta = { label: 'After recap', stage: 'after' as const, profileId: 3 };

	it('posts the WAV and meta to the job and returns the server verdict', async () => {
		const fetcher = vi.fn(async (_url: RequestInfo | URL, init?: RequestInit) => {
			const form = init!.body as FormData;
			expect(JSON.parse(form.get('meta') as string)).toEqual(meta);
			expect((form.get('samples') as File).name).toBe('job-12-after.wav');
			expect((form.get('samples') as File).size).toBe(44);
			return new Response(JSON.stringify({ id: 7, verdict: 'pass', checks: [] }), { status: 201 });
		});
		const saved = await uploadSnapshot(12, new ArrayBuffer(44), meta, fetcher as typeof fetch);
		expect(saved).toEqual({ id: 7, verdict: 'pass', checks: [] });
		expect(fetcher.mock.calls[0][0]).toBe('/api/jobs/12/snapshots');
		expect(fetcher.mock.calls[0][1]!.method).toBe('POST');
	});

	it('throws the server message on a refusal, and the status when there is none', async () => {
		const refuse = async () =>
			new Response(JSON.stringify({ message: 'label: Give the snapshot a label' }), { status: 400 });
		await expect(uploadSnapshot(1, new ArrayBuffer(4), meta, refuse as typeof fetch)).rejects.toThrow(
			'label: Give the snapshot a label'
		);
		const broken = async () => new Response('<html>', { status: 502 });
		await expect(uploadSnapshot(1, new ArrayBuffer(4), meta, broken as typeof fetch)).rejects.toThrow(
			'The server refused the snapshot (502)'
		);
	});
});
