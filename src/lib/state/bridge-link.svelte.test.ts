// BridgeLink against a scripted fake WebSocket: token fetch and URL override, hello, dropped
// frames from sequence gaps, frames handed over untouched, restart events on a new bootId,
// temps-after backfill after a reconnect, control messages validated before sending, the
// bridge's DC-coupling declaration, and token renewal over the open socket.
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import {
	CLOSE_SESSION_ENDED,
	CLOSE_SESSION_ENDED_REASON,
	encodeFrame,
	DEFAULT_SIMULATOR_STATE,
	type HelloMessage
} from '$lib/bridge/protocol';
import {
	BridgeLink,
	BRIDGE_URL_OVERRIDE_KEY,
	type FrameInfo,
	type RestartEvent,
	type TempsEvent
} from './bridge-link.svelte';

class FakeSocket {
	static OPEN = 1;
	static instances: FakeSocket[] = [];
	readyState = 0;
	binaryType = 'blob';
	sent: string[] = [];
	onopen: ((ev: unknown) => void) | null = null;
	onmessage: ((ev: { data: unknown }) => void) | null = null;
	onclose: ((ev: { code: number; reason: string }) => void) | null = null;
	onerror: ((ev: unknown) => void) | null = null;
	constructor(readonly url: string) {
		FakeSocket.instances.push(this);
	}
	send(data: string) {
		this.sent.push(data);
	}
	close(code = 1000, reason = '') {
		this.readyState = 3;
		this.onclose?.({ code, reason });
	}
	// Test side:
	open() {
		this.readyState = FakeSocket.OPEN;
		this.onopen?.({});
	}
	text(msg: unknown) {
		this.onmessage?.({ data: JSON.stringify(msg) });
	}
	binary(buf: ArrayBuffer) {
		this.onmessage?.({ data: buf });
	}
	drop(code = 1006, reason = '') {
		this.readyState = 3;
		this.onclose?.({ code, reason });
	}
}

function hello(bootId: string, over: Partial<HelloMessage> = {}): HelloMessage {
	return {
		type: 'hello',
		protocolVersion: 1,
		bootId,
		sampleRateHz: 48000,
		channels: 2,
		blockSize: 4,
		fullScaleVolts: [20, 20],
		source: 'sim',
		sourceLabel: 'simulator (seed 1)',
		temps: 'sim',
		probes: [],
		simulator: DEFAULT_SIMULATOR_STATE,
		generator: { kind: 'off' },
		timeScale: 1,
		lastTempSeq: null,
		serverTimeMs: 0,
		dcCoupled: true,
		...over
	};
}

const frame = (seq: number, flags = 0) =>
	encodeFrame(
		{ seq, firstSampleIndex: seq * 4, sampleRateHz: 48000, channels: 2, sampleCount: 4, flags },
		new Float32Array(8).fill(0.25)
	);

const store = new Map<string, string>();

beforeEach(() => {
	vi.useFakeTimers();
	FakeSocket.instances = [];
	store.clear();
	vi.stubGlobal('WebSocket', FakeSocket);
	vi.stubGlobal('localStorage', {
		getItem: (k: string) => store.get(k) ?? null,
		setItem: (k: string, v: string) => void store.set(k, v),
		removeItem: (k: string) => void store.delete(k)
	});
	vi.stubGlobal(
		'fetch',
		vi.fn(
			async () =>
				new Response(JSON.stringify({ token: 'tok-1', expiresAt: 0, bridgeUrl: 'ws://127.0.0.1:8787' }))
		)
	);
});
afterEach(() => {
	vi.useRealTimers();
	vi.unstubAllGlobals();
});

async function connected(
	link: BridgeLink,
	bootId = 'boot-a',
	over: Partial<HelloMessage> = {}
): Promise<FakeSocket> {
	const before = FakeSocket.instances.length;
	link.connect();
	await vi.waitFor(() => expect(FakeSocket.instances.length).toBeGreaterThan(before));
	const ws = FakeSocket.instances.at(-1)!;
	ws.open();
	ws.text(hello(bootId, over));
	return ws;
}

const sentOf = (ws: FakeSocket) => ws.sent.map((t) => JSON.parse(t) as Record<string, unknown>);

describe('BridgeLink', () => {
	it('fetches a token and connects to the shop bridge, or to this browser’s override', async () => {
		const link = new BridgeLink();
		const ws = await connected(link);
		expect(ws.url).toBe('ws://127.0.0.1:8787/stream?token=tok-1');
		expect(ws.binaryType).toBe('arraybuffer');
		expect(link.status).toBe('connected');
		expect(link.hello?.sampleRateHz).toBe(48000);
		expect(link.simulator?.volumeDb).toBe(DEFAULT_SIMULATOR_STATE.volumeDb);
		link.disconnect();

		store.set(BRIDGE_URL_OVERRIDE_KEY, 'ws://127.0.0.1:8901');
		const other = new BridgeLink();
		const ws2 = await connected(other);
		expect(ws2.url).toBe('ws://127.0.0.1:8901/stream?token=tok-1');
		other.disconnect();
	});

	it('counts dropped frames from sequence gaps and hands each frame over untouched', async () => {
		const link = new BridgeLink();
		const got: [ArrayBuffer, FrameInfo][] = [];
		link.onFrame((b, info) => got.push([b, info]));
		const ws = await connected(link);
		const sent = [frame(10), frame(11), frame(14), frame(15, 1)];
		for (const f of sent) ws.binary(f);
		vi.advanceTimersByTime(300); // the counters are published a few times a second
		expect(link.framesReceived).toBe(4);
		expect(link.droppedFrames).toBe(2); // 12 and 13 never came
		expect(link.discontinuities).toBe(1);
		expect(got.map(([b]) => b)).toEqual(sent);
		expect(got[0][0]).toBe(sent[0]); // the same buffer, not a copy
		expect(got.map(([, i]) => [i.seq, i.channels, i.sampleCount, i.sampleRateHz])).toEqual([
			[10, 2, 4, 48000],
			[11, 2, 4, 48000],
			[14, 2, 4, 48000],
			[15, 2, 4, 48000]
		]);
		ws.binary(new ArrayBuffer(40)); // not a frame
		vi.advanceTimersByTime(300);
		expect(link.badFrames).toBe(1);
		link.disconnect();
	});

	it('reconnects with backoff, reports a restart when the bootId changes, and asks for missed temperatures', async () => {
		const link = new BridgeLink({ minBackoffMs: 100, maxBackoffMs: 1000 });
		const restarts: RestartEvent[] = [];
		const temps: TempsEvent[] = [];
		link.onRestart((e) => restarts.push(e));
		link.onTemps((e) => temps.push(e));
		const ws = await connected(link, 'boot-a');
		ws.text({
			type: 'temps',
			bootId: 'boot-a',
			readings: [{ probe: 'ambient', seq: 500, t: 1, celsius: 24.5 }]
		});
		expect(link.lastTempSeq).toBe(500);
		expect(link.latestTemps.ambient.celsius).toBe(24.5);

		ws.drop();
		expect(link.status).toBe('reconnecting');
		expect(link.attempt).toBe(1);
		await vi.advanceTimersByTimeAsync(200); // first retry within 100 ms ± 20 %
		const ws2 = FakeSocket.instances.at(-1)!;
		expect(ws2).not.toBe(ws);
		ws2.open();
		ws2.text(hello('boot-b'));
		expect(link.status).toBe('connected');
		expect(link.attempt).toBe(0);
		expect(restarts).toEqual([
			{ kind: 'restart', previousBootId: 'boot-a', bootId: 'boot-b', lastTempSeq: 500 }
		]);
		// Backfill from the last reading seen before the gap.
		expect(ws2.sent.map((s) => JSON.parse(s))).toEqual([
			{ v: 1, id: expect.any(Number), type: 'temps-after', seq: 500 }
		]);
		ws2.text({
			type: 'temps',
			bootId: 'boot-b',
			backfill: true,
			complete: true,
			readings: [{ probe: 'ambient', seq: 501, t: 2, celsius: 25 }]
		});
		expect(temps.at(-1)).toMatchObject({ bootId: 'boot-b', backfill: true });
		expect(link.lastTempSeq).toBe(501);
		link.disconnect();
	});

	it('validates control messages with the protocol schema before sending', async () => {
		const link = new BridgeLink();
		expect(link.send({ type: 'generator', generator: { kind: 'off' } })).toEqual({
			ok: false,
			error: 'not connected to the bridge'
		});
		const ws = await connected(link);
		const bad = link.send({
			type: 'generator',
			generator: { kind: 'sine', frequencyHz: 1000, levelVrms: 50 }
		});
		expect(bad.ok).toBe(false);
		expect(ws.sent).toHaveLength(0);
		const good = link.send({
			type: 'generator',
			generator: { kind: 'sine', frequencyHz: 1000, levelVrms: 0.5 }
		});
		expect(good.ok).toBe(true);
		expect(JSON.parse(ws.sent[0])).toEqual({
			v: 1,
			id: (good as { id: number }).id,
			type: 'generator',
			generator: { kind: 'sine', frequencyHz: 1000, levelVrms: 0.5 }
		});
		ws.text({ type: 'state', generator: { kind: 'sine', frequencyHz: 1000, levelVrms: 0.5 }, loadOhms: 4 });
		expect(link.generator).toEqual({ kind: 'sine', frequencyHz: 1000, levelVrms: 0.5 });
		expect(link.loadOhms).toBe(4);
		link.disconnect();
		expect(link.status).toBe('closed');
	});

	it('says whether the bridge input is DC-coupled, as the hello declares (not declared: no)', async () => {
		const link = new BridgeLink();
		expect(link.dcCoupled).toBe(false);
		await connected(link, 'boot-a', { dcCoupled: true });
		expect(link.dcCoupled).toBe(true);
		link.disconnect();
		const other = new BridgeLink();
		const { dcCoupled: _omit, ...old } = hello('boot-b');
		const ws = await (async () => {
			other.connect();
			await vi.waitFor(() => expect(FakeSocket.instances.length).toBeGreaterThan(1));
			return FakeSocket.instances.at(-1)!;
		})();
		ws.open();
		ws.text(old); // an older bridge that says nothing about coupling
		expect(other.status).toBe('connected');
		expect(other.dcCoupled).toBe(false);
		other.disconnect();
	});

	it('renews its token over the open socket before the bridge’s expiry, and again after each renewal', async () => {
		const link = new BridgeLink();
		const fetchMock = vi.mocked(fetch);
		const ws = await connected(link, 'boot-a', { serverTimeMs: 1_000_000, tokenExpiresAtMs: 1_120_000 });
		expect(fetchMock).toHaveBeenCalledTimes(1);
		fetchMock.mockImplementation(
			async () =>
				new Response(JSON.stringify({ token: 'tok-2', expiresAt: 0, bridgeUrl: 'ws://127.0.0.1:8787' }))
		);
		// 120 s left: renew after a third of it.
		await vi.advanceTimersByTimeAsync(39_000);
		expect(sentOf(ws).filter((m) => m.type === 'renew')).toHaveLength(0);
		await vi.advanceTimersByTimeAsync(1_500);
		const renew = sentOf(ws).filter((m) => m.type === 'renew');
		expect(renew).toEqual([{ v: 1, id: expect.any(Number), type: 'renew', token: 'tok-2' }]);
		ws.text({
			type: 'renewed',
			tokenExpiresAtMs: 2_120_000,
			serverTimeMs: 2_000_000,
			role: 'technician',
			replyTo: renew[0].id
		});
		await vi.advanceTimersByTimeAsync(39_000);
		expect(sentOf(ws).filter((m) => m.type === 'renew')).toHaveLength(1);
		await vi.advanceTimersByTimeAsync(1_500);
		expect(sentOf(ws).filter((m) => m.type === 'renew')).toHaveLength(2);
		expect(link.status).toBe('connected');
		link.disconnect();
	});

	it('retries a refused renewal, and stops with "sign in again" when the app refuses a token (401)', async () => {
		const link = new BridgeLink();
		const fetchMock = vi.mocked(fetch);
		const ws = await connected(link, 'boot-a', { serverTimeMs: 0, tokenExpiresAtMs: 60_000 });
		await vi.advanceTimersByTimeAsync(20_500);
		const first = sentOf(ws).filter((m) => m.type === 'renew');
		expect(first).toHaveLength(1);
		ws.text({
			type: 'error',
			code: 'renew-refused',
			message: 'that token is for another user or session',
			replyTo: first[0].id
		});
		await vi.advanceTimersByTimeAsync(5_500);
		expect(sentOf(ws).filter((m) => m.type === 'renew')).toHaveLength(2);
		// The session ended on the server: the token endpoint answers 401.
		fetchMock.mockImplementation(
			async () => new Response(JSON.stringify({ message: 'Sign in first' }), { status: 401 })
		);
		await vi.advanceTimersByTimeAsync(5_500);
		expect(link.status).toBe('closed');
		expect(link.sessionEnded).toBe(true);
		expect(link.error).toBe(CLOSE_SESSION_ENDED_REASON);
		const sockets = FakeSocket.instances.length;
		await vi.advanceTimersByTimeAsync(30_000);
		expect(FakeSocket.instances.length).toBe(sockets); // no reconnecting
	});

	it('shows the bridge’s reason and does not reconnect when the bridge ends the stream at token expiry', async () => {
		const link = new BridgeLink({ minBackoffMs: 100 });
		const ws = await connected(link);
		ws.drop(CLOSE_SESSION_ENDED, CLOSE_SESSION_ENDED_REASON);
		expect(link.status).toBe('closed');
		expect(link.sessionEnded).toBe(true);
		expect(link.error).toBe('your session ended; sign in again');
		const sockets = FakeSocket.instances.length;
		await vi.advanceTimersByTimeAsync(5_000);
		expect(FakeSocket.instances.length).toBe(sockets);
		// Signing in again and pressing Connect starts afresh.
		await connected(link);
		expect(link.status).toBe('connected');
		expect(link.sessionEnded).toBe(false);
		link.disconnect();
	});
});
