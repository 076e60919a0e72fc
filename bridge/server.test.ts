// The bridge server, live and in-process: upgrade refusals before any WebSocket exists,
// hello and frames for an authorised client, control messages, garbage that must not stop
// it serving, temperature backfill (paced by a stalled client's buffer), rate limiting,
// per-client flow control, the per-user stream cap, and token expiry and renewal.
import { request } from 'node:http';
import { connect as netConnect, type Socket } from 'node:net';
import { randomBytes } from 'node:crypto';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import WebSocket from 'ws';
import { SignJWT } from 'jose';
import { startBridge, type BridgeOptions, type RunningBridge } from './server';
import { mintBridgeToken, BRIDGE_ISSUER } from '../src/lib/bridge/token';
import {
	CLOSE_SESSION_ENDED,
	CLOSE_SESSION_ENDED_REASON,
	CLOSE_TOO_MANY_FOR_USER,
	decodeFrame,
	parseBridgeMessage,
	type BridgeMessage,
	type DecodedFrame,
	type HelloMessage,
	type StatsMessage
} from '../src/lib/bridge/protocol';
import { db, toneAmplitude } from './testing';

const SECRET = 'bridge-test-secret-0123456789-abcdefghijklmnop';
const ORIGIN = 'http://127.0.0.1:3000';

function options(over: Partial<BridgeOptions> = {}): BridgeOptions {
	return {
		host: '127.0.0.1',
		port: 0,
		secret: SECRET,
		allowedOrigins: [ORIGIN],
		source: { kind: 'sim' },
		sampleRateHz: 48_000,
		channels: 2,
		blockSize: 1024,
		temps: { kind: 'sim' },
		timeScale: 60,
		seed: 7,
		log: () => {},
		...over,
		tuning: {
			tempsIntervalMs: 100,
			statsMs: 200,
			controlPerSecond: 100_000,
			maxClientsPerUser: 8,
			...over.tuning
		}
	};
}

const token = async (
	ttlS = 60,
	nowMs = Date.now(),
	claims: { userId?: string; role?: 'technician' | 'supervisor' | 'admin'; sessionTag?: string } = {}
) =>
	(
		await mintBridgeToken(
			SECRET,
			{ userId: claims.userId ?? 'tech-1', role: claims.role ?? 'technician', sessionTag: claims.sessionTag },
			ttlS,
			nowMs
		)
	).token;

/** Status of a raw upgrade attempt: 101 when the bridge accepted it. */
function upgradeStatus(
	port: number,
	path: string,
	headers: Record<string, string | undefined>
): Promise<number> {
	return new Promise((resolve, reject) => {
		const h: Record<string, string> = {
			Connection: 'Upgrade',
			Upgrade: 'websocket',
			'Sec-WebSocket-Version': '13',
			'Sec-WebSocket-Key': randomBytes(16).toString('base64'),
			Host: `127.0.0.1:${port}`,
			Origin: ORIGIN
		};
		for (const [k, v] of Object.entries(headers)) {
			if (v === undefined) delete h[k];
			else h[k] = v;
		}
		const req = request({ host: '127.0.0.1', port, path, headers: h });
		req.on('upgrade', (_res, socket) => {
			socket.destroy();
			resolve(101);
		});
		req.on('response', (res) => {
			res.resume();
			resolve(res.statusCode ?? 0);
		});
		req.on('error', reject);
		req.end();
	});
}

interface TestClient {
	ws: WebSocket;
	messages: BridgeMessage[];
	frames: DecodedFrame[];
	badFrames: number;
	closed: Promise<number>;
	closedWith: Promise<{ code: number; reason: string }>;
	waitFor<T>(pick: () => T | undefined, what: string, timeoutMs?: number): Promise<T>;
	send(value: unknown): void;
}

async function client(port: number, tok?: string): Promise<TestClient> {
	const ws = new WebSocket(`ws://127.0.0.1:${port}/stream?token=${tok ?? (await token())}`, {
		headers: { origin: ORIGIN }
	});
	const c: TestClient = {
		ws,
		messages: [],
		frames: [],
		badFrames: 0,
		closed: new Promise((resolve) => ws.on('close', (code) => resolve(code))),
		closedWith: new Promise((resolve) =>
			ws.on('close', (code, reason) => resolve({ code, reason: reason.toString() }))
		),
		async waitFor(pick, what, timeoutMs = 10_000) {
			const start = Date.now();
			for (;;) {
				const v = pick();
				if (v !== undefined) return v;
				if (Date.now() - start > timeoutMs) throw new Error(`timed out waiting for ${what}`);
				await new Promise((r) => setTimeout(r, 10));
			}
		},
		send(value) {
			ws.send(typeof value === 'string' ? value : JSON.stringify(value));
		}
	};
	ws.on('message', (data, isBinary) => {
		if (isBinary) {
			try {
				c.frames.push(decodeFrame(data as Buffer));
			} catch {
				c.badFrames++;
			}
		} else {
			const m = parseBridgeMessage(data.toString());
			if (!m.ok) throw new Error(m.error);
			c.messages.push(m.message);
		}
	});
	await new Promise<void>((resolve, reject) => {
		ws.once('open', () => resolve());
		ws.once('error', reject);
	});
	return c;
}

const ofType = <K extends BridgeMessage['type']>(c: TestClient, type: K) =>
	c.messages.filter((m): m is Extract<BridgeMessage, { type: K }> => m.type === type);

describe('bridge server', () => {
	let bridge: RunningBridge;
	beforeAll(async () => {
		bridge = await startBridge(options());
	});
	afterAll(async () => {
		await bridge?.close();
	});

	it('refuses unauthorised upgrades with 401/403 before any WebSocket exists', async () => {
		const p = bridge.port;
		const key = new TextEncoder().encode(SECRET);
		const iat = Math.floor(Date.now() / 1000);
		const wrongAudience = await new SignJWT({ role: 'technician' })
			.setProtectedHeader({ alg: 'HS256' })
			.setSubject('tech-1')
			.setAudience('another-service')
			.setIssuer(BRIDGE_ISSUER)
			.setIssuedAt(iat)
			.setExpirationTime(iat + 60)
			.sign(key);
		const forged = (
			await mintBridgeToken('some-other-secret-0123456789-abcdefghij', { userId: 'x', role: 'admin' })
		).token;
		const expired = await token(60, Date.now() - 120_000);
		// Issued two minutes ahead: beyond the 30 s allowed for clock skew between PCs.
		const future = await token(60, Date.now() + 120_000);
		const slightlyAhead = await token(60, Date.now() + 10_000);
		const good = await token();
		expect(await upgradeStatus(p, '/stream', {})).toBe(401); // no token
		expect(await upgradeStatus(p, `/stream?token=${forged}`, {})).toBe(401); // bad signature
		expect(await upgradeStatus(p, `/stream?token=${expired}`, {})).toBe(401);
		expect(await upgradeStatus(p, `/stream?token=${future}`, {})).toBe(401);
		expect(await upgradeStatus(p, `/stream?token=${wrongAudience}`, {})).toBe(401);
		expect(await upgradeStatus(p, `/stream?token=garbage`, {})).toBe(401);
		expect(await upgradeStatus(p, `/stream?token=${good}`, { Origin: 'http://evil.example' })).toBe(403);
		expect(
			await upgradeStatus(p, `/stream?token=${good}`, { Origin: 'http://127.0.0.1:3000.evil.example' })
		).toBe(403);
		expect(await upgradeStatus(p, `/stream?token=${good}`, { Origin: undefined })).toBe(403);
		// DNS rebinding: the attacker's name resolves to 127.0.0.1 but the Host header gives it away.
		expect(await upgradeStatus(p, `/stream?token=${good}`, { Host: `evil.example:${p}` })).toBe(403);
		expect(await upgradeStatus(p, `/stream?token=${good}`, { Host: `127.0.0.1:${p + 1}` })).toBe(403);
		expect(await upgradeStatus(p, `/elsewhere?token=${good}`, {})).toBe(404);
		expect(bridge.clientCount()).toBe(0);
		expect(await upgradeStatus(p, `/stream?token=${good}`, { Host: `localhost:${p}` })).toBe(101);
		expect(await upgradeStatus(p, `/stream?token=${slightlyAhead}`, {})).toBe(101);
	});

	it('sends the hello, then frames and temperatures to an authorised client', async () => {
		const c = await client(bridge.port);
		await c.waitFor(() => (c.frames.length >= 5 ? true : undefined), 'frames');
		const hello = c.messages[0] as HelloMessage;
		expect(hello).toMatchObject({
			type: 'hello',
			protocolVersion: 1,
			sampleRateHz: 48_000,
			channels: 2,
			blockSize: 1024,
			fullScaleVolts: [50, 50],
			source: 'sim',
			temps: 'sim',
			timeScale: 60,
			seed: 7,
			bootId: bridge.bootId,
			// The simulated analyzer input passes DC, so the bench may offer a DC-offset reading.
			dcCoupled: true
		});
		// The token's expiry, on the bridge's clock (the client compares it with serverTimeMs).
		expect(hello.tokenExpiresAtMs! - hello.serverTimeMs).toBeGreaterThan(58_000);
		expect(hello.tokenExpiresAtMs! - hello.serverTimeMs).toBeLessThanOrEqual(60_000);
		expect(hello.probes.map((p) => p.id)).toEqual([
			'heatsink-left',
			'heatsink-right',
			'transformer',
			'ambient'
		]);
		const seqs = c.frames.map((f) => f.seq);
		for (let i = 1; i < seqs.length; i++) expect(seqs[i]).toBe(seqs[i - 1] + 1);
		for (const f of c.frames)
			expect(f).toMatchObject({ channels: 2, sampleCount: 1024, sampleRateHz: 48_000 });
		expect(c.frames[1].firstSampleIndex - c.frames[0].firstSampleIndex).toBe(1024);
		const temps = await c.waitFor(() => ofType(c, 'temps')[0], 'temps');
		expect(temps.bootId).toBe(bridge.bootId);
		expect(temps.readings.map((r) => r.probe).sort()).toEqual([
			'ambient',
			'heatsink-left',
			'heatsink-right',
			'transformer'
		]);
		c.ws.close();
	});

	it('applies control messages, answers with state, and the stream carries the new level', async () => {
		const c = await client(bridge.port);
		await c.waitFor(() => c.messages[0], 'hello');
		c.send({
			v: 1,
			id: 'g1',
			type: 'generator',
			generator: { kind: 'sine', frequencyHz: 750, levelVrms: 0.25 }
		});
		const state = await c.waitFor(() => ofType(c, 'state').find((m) => m.replyTo === 'g1'), 'state');
		expect(state.generator).toEqual({ kind: 'sine', frequencyHz: 750, levelVrms: 0.25 });
		expect(state.simulator?.volumeDb).toBe(26);
		const after = c.frames.length;
		const frame = await c.waitFor(() => c.frames[after + 2], 'a frame after the change');
		// 1024 samples at 48 kHz hold exactly 16 periods of 750 Hz; 0.25 V × 26 dB = 4.99 V rms.
		const left = Float64Array.from({ length: 1024 }, (_, i) => frame.samples[2 * i] * 50);
		expect(
			Math.abs(db(toneAmplitude(left, 750, 48_000) / Math.SQRT2 / (0.25 * 10 ** (26 / 20))))
		).toBeLessThan(0.02);

		c.send({ v: 1, id: 's1', type: 'sim', volumeDb: 0, faults: { tiredFilterCap: true } });
		const s2 = await c.waitFor(() => ofType(c, 'state').find((m) => m.replyTo === 's1'), 'sim state');
		expect(s2.simulator).toMatchObject({ volumeDb: 0, faults: { tiredFilterCap: true } });
		c.send({ v: 1, id: 'l1', type: 'load', loadOhms: 4 });
		expect(
			(await c.waitFor(() => ofType(c, 'state').find((m) => m.replyTo === 'l1'), 'load state')).loadOhms
		).toBe(4);
		c.send({
			v: 1,
			id: 'n1',
			type: 'generator',
			generator: { kind: 'sine', frequencyHz: 30_000, levelVrms: 1 }
		});
		const err = await c.waitFor(() => ofType(c, 'error').find((m) => m.replyTo === 'n1'), 'nyquist error');
		expect(err.code).toBe('out-of-range');
		// Put things back for the other tests.
		c.send({ v: 1, id: 'r', type: 'sim', volumeDb: 26, loadOhms: 8, faults: { tiredFilterCap: false } });
		c.send({ v: 1, id: 'r2', type: 'generator', generator: { kind: 'off' } });
		await c.waitFor(() => ofType(c, 'state').find((m) => m.replyTo === 'r2'), 'reset');
		c.ws.close();
	});

	it('turns the generator off by itself when the deadman runs out, and a new message disarms it', async () => {
		const c = await client(bridge.port);
		await c.waitFor(() => c.messages[0], 'hello');
		const sine = { kind: 'sine', frequencyHz: 1000, levelVrms: 0.1 } as const;
		c.send({ v: 1, id: 'd1', type: 'generator', generator: sine, offAfterS: 0.3 });
		await c.waitFor(() => ofType(c, 'state').find((m) => m.replyTo === 'd1'), 'armed');
		const off = await c.waitFor(
			() => ofType(c, 'state').find((m) => m.replyTo === undefined && m.generator.kind === 'off'),
			'deadman off'
		);
		expect(off.generator).toEqual({ kind: 'off' });
		// A later message without offAfterS replaces the deadman: the drive stays on.
		c.send({ v: 1, id: 'd2', type: 'generator', generator: sine, offAfterS: 0.3 });
		c.send({ v: 1, id: 'd3', type: 'generator', generator: sine });
		await c.waitFor(() => ofType(c, 'state').find((m) => m.replyTo === 'd3'), 'replaced');
		const countOff = () =>
			ofType(c, 'state').filter((m) => m.replyTo === undefined && m.generator.kind === 'off').length;
		const before = countOff();
		await new Promise((r) => setTimeout(r, 600));
		expect(countOff()).toBe(before);
		c.send({ v: 1, id: 'd4', type: 'generator', generator: { kind: 'off' } });
		await c.waitFor(() => ofType(c, 'state').find((m) => m.replyTo === 'd4'), 'reset');
		c.ws.close();
	});

	it('answers thousands of garbage messages with errors, changes nothing, and keeps serving', async () => {
		const c = await client(bridge.port);
		const hello = await c.waitFor(() => c.messages[0] as HelloMessage | undefined, 'hello');
		let seed = 12345;
		const rnd = () => (seed = (Math.imul(seed, 1664525) + 1013904223) >>> 0) / 4294967296;
		const templates = [
			{ v: 1, type: 'generator', generator: { kind: 'sine', frequencyHz: 1000, levelVrms: 1 } },
			{ v: 1, type: 'sim', volumeDb: 10 },
			{ v: 1, type: 'load', loadOhms: 8 },
			{ v: 1, type: 'temps-after', seq: 0 }
		];
		// Values that are invalid for every field of every template, so each message must be refused.
		const junk = [-1e6, 'x', null, {}, [], true];
		let sent = 0;
		for (let i = 0; i < 2000; i++) {
			const m = structuredClone(templates[i % templates.length]) as Record<string, unknown>;
			const keys = Object.keys(m);
			m[rnd() < 0.3 ? 'v' : keys[1 + Math.floor(rnd() * (keys.length - 1))]] =
				junk[Math.floor(rnd() * junk.length)];
			if (m.v === 1 && rnd() < 0.5) m.v = 'one';
			let text = JSON.stringify(m);
			if (rnd() < 0.4) text = text.slice(0, Math.max(1, Math.floor(rnd() * text.length)));
			c.send(text);
			sent++;
		}
		for (let i = 0; i < 500; i++) {
			c.ws.send(randomBytes(1 + Math.floor(rnd() * 200)), { binary: true });
			sent++;
		}
		for (let i = 0; i < 500; i++) {
			c.send(randomBytes(1 + Math.floor(rnd() * 300)).toString('latin1'));
			sent++;
		}
		const errors = await c.waitFor(
			() => (ofType(c, 'error').length >= sent ? ofType(c, 'error') : undefined),
			'errors',
			20_000
		);
		expect(errors.length).toBe(sent);
		expect(ofType(c, 'state')).toHaveLength(0);
		expect(ofType(c, 'temps').filter((m) => m.backfill)).toHaveLength(0);
		const framesBefore = c.frames.length;
		await c.waitFor(() => (c.frames.length >= framesBefore + 3 ? true : undefined), 'frames after garbage');
		expect(c.badFrames).toBe(0);

		// Raw garbage at the HTTP port, including a half-open upgrade.
		await new Promise<void>((resolve) => {
			const s: Socket = netConnect(bridge.port, '127.0.0.1', () => {
				s.write(randomBytes(3000));
				s.end();
			});
			s.resume();
			s.on('error', () => resolve());
			s.on('close', () => resolve());
		});
		await new Promise<void>((resolve) => {
			const s: Socket = netConnect(bridge.port, '127.0.0.1', () => {
				s.write(
					`GET /stream HTTP/1.1\r\nHost: 127.0.0.1:${bridge.port}\r\nUpgrade: websocket\r\nConnection: Upgrade\r\n`
				);
				setTimeout(() => s.destroy(), 50);
			});
			s.resume();
			s.on('error', () => resolve());
			s.on('close', () => resolve());
		});

		// An oversized control message closes that socket (1009) — and only that socket.
		c.send('x'.repeat(10_000));
		expect(await c.closed).toBe(1009);
		const fresh = await client(bridge.port);
		const again = await fresh.waitFor(() => fresh.messages[0] as HelloMessage | undefined, 'hello');
		expect(again.bootId).toBe(hello.bootId);
		expect(again.simulator).toEqual(hello.simulator);
		expect(again.generator).toEqual({ kind: 'off' });
		await fresh.waitFor(() => (fresh.frames.length >= 3 ? true : undefined), 'frames on a fresh client');
		fresh.ws.close();
	});

	it('backfills temperature readings after a sequence number', async () => {
		const c = await client(bridge.port);
		await c.waitFor(() => (bridge.tempLog.ring.size >= 12 ? true : undefined), 'readings');
		const all = bridge.tempLog.ring.after(-1, 1000);
		const from = all[3].seq;
		c.send({ v: 1, id: 'b1', type: 'temps-after', seq: from });
		const reply = await c.waitFor(() => ofType(c, 'temps').find((m) => m.replyTo === 'b1'), 'backfill');
		expect(reply.backfill).toBe(true);
		expect(reply.complete).toBe(true);
		expect(reply.oldestSeq).toBe(all[0].seq);
		expect(reply.readings[0].seq).toBe(from + 1);
		for (let i = 1; i < reply.readings.length; i++)
			expect(reply.readings[i].seq).toBe(reply.readings[i - 1].seq + 1);
		expect(reply.readings[0].seq).toBeGreaterThanOrEqual(bridge.tempLog.bootMs);
		c.ws.close();
	});
});

describe('bridge server limits', () => {
	it('rate-limits control messages and reports refusals in stats', async () => {
		const b = await startBridge(options({ tuning: { controlPerSecond: 5 } }));
		try {
			const c = await client(b.port);
			for (let i = 0; i < 40; i++) c.send({ v: 1, type: 'load', loadOhms: 8 });
			const limited = await c.waitFor(
				() => ofType(c, 'error').find((m) => m.code === 'rate-limited'),
				'rate-limited'
			);
			expect(limited.message).toMatch(/5 control messages/);
			const stats = await c.waitFor(
				() => ofType(c, 'stats').find((s) => s.controlRejected >= 35),
				'stats with rejections'
			);
			expect(stats.controlRejected).toBeLessThanOrEqual(40);
			expect(ofType(c, 'state').length).toBeLessThanOrEqual(5);
			c.ws.close();
		} finally {
			await b.close();
		}
	});

	it('drops whole frames for a slow client, counts them, and never slows a fast one', async () => {
		// 192 kHz × 8 channels ≈ 6 MB/s, so a paused reader backs up quickly.
		const b = await startBridge(
			options({
				sampleRateHz: 192_000,
				channels: 8,
				blockSize: 8192,
				temps: { kind: 'none' },
				tuning: { highWaterBytes: 512 * 1024 }
			})
		);
		try {
			const slow = await client(b.port);
			const fast = await client(b.port);
			await slow.waitFor(() => slow.messages[0], 'hello');
			(slow.ws as unknown as { _socket: Socket })._socket.pause();
			const start = fast.frames.length;
			await fast.waitFor(() => (fast.frames.length >= start + 120 ? true : undefined), 'fast frames', 30_000);
			(slow.ws as unknown as { _socket: Socket })._socket.resume();
			const seqs = fast.frames.map((f) => f.seq);
			for (let i = 1; i < seqs.length; i++) expect(seqs[i]).toBe(seqs[i - 1] + 1);
			const statsAfter = slow.messages.length;
			const stats = await slow.waitFor(
				() =>
					slow.messages
						.slice(statsAfter)
						.find((m): m is StatsMessage => m.type === 'stats' && m.framesDropped > 0),
				'slow stats'
			);
			expect(stats.framesDropped).toBeGreaterThan(0);
			// Frames sent after the drops show the gap in sequence numbers.
			const gaps = () => {
				const seqs = slow.frames.map((f) => f.seq);
				const n = seqs.slice(1).filter((s, i) => s !== seqs[i] + 1).length;
				return n > 0 ? n : undefined;
			};
			expect(await slow.waitFor(gaps, "a gap in the slow client's frames")).toBeGreaterThan(0);
			expect(slow.badFrames).toBe(0);
			for (const f of slow.frames) expect(f.sampleCount).toBe(8192);
			slow.ws.close();
			fast.ws.close();
		} finally {
			await b.close();
		}
	});
});

describe('bridge server: backfill flow control', () => {
	it('a stalled client asking for a day of history never makes the bridge hold more than about one chunk', async () => {
		const highWaterBytes = 256 * 1024;
		const b = await startBridge(
			options({
				temps: { kind: 'none' },
				tuning: { highWaterBytes, backfillHighWaterBytes: highWaterBytes, backfillChunk: 2000 }
			})
		);
		try {
			// 300 000 readings (about 25 MB of JSON): far more than the kernel's socket buffers hold.
			const total = 300_000;
			const t0 = Date.now() - total * 250;
			for (let i = 0; i < total / 4; i++)
				b.tempLog.record(
					[
						{ probe: 'heatsink-left', celsius: 40 },
						{ probe: 'heatsink-right', celsius: 41 },
						{ probe: 'transformer', celsius: 50 },
						{ probe: 'ambient', celsius: 23 }
					],
					t0 + i * 1000
				);
			const c = await client(b.port);
			await c.waitFor(() => c.messages[0], 'hello');
			const socket = (c.ws as unknown as { _socket: Socket })._socket;
			socket.pause();
			c.send({ v: 1, id: 'bf', type: 'temps-after', seq: -1 });
			c.send({ v: 1, id: 'bf2', type: 'temps-after', seq: -1 });
			let maxBuffered = 0;
			for (let i = 0; i < 150; i++) {
				maxBuffered = Math.max(maxBuffered, b.bufferedBytes());
				await new Promise((r) => setTimeout(r, 10));
			}
			// One chunk of 2000 readings is about 170 kB; frames stop at the high-water mark.
			expect(maxBuffered).toBeGreaterThan(0);
			expect(maxBuffered).toBeLessThan(highWaterBytes + 512 * 1024);
			socket.resume();
			const chunks = await c.waitFor(
				() => {
					const mine = ofType(c, 'temps').filter((m) => m.replyTo === 'bf');
					return mine.at(-1)?.complete ? mine : undefined;
				},
				'the whole backfill',
				30_000
			);
			const seqs = chunks.flatMap((m) => m.readings.map((r) => r.seq));
			expect(seqs.length).toBe(total);
			for (let i = 1; i < seqs.length; i++) expect(seqs[i]).toBe(seqs[i - 1] + 1);
			expect(chunks.filter((m) => m.complete)).toHaveLength(1);
			// One backfill at a time per client: the second request was refused, not queued.
			const busy = await c.waitFor(() => ofType(c, 'error').find((m) => m.replyTo === 'bf2'), 'busy');
			expect(busy.code).toBe('busy');
			// Once done, another request is served.
			c.send({ v: 1, id: 'bf3', type: 'temps-after', seq: seqs.at(-1)! - 3 });
			const last = await c.waitFor(() => ofType(c, 'temps').find((m) => m.replyTo === 'bf3'), 'bf3');
			expect(last.readings.map((r) => r.seq)).toEqual([seqs.at(-1)! - 2, seqs.at(-1)! - 1, seqs.at(-1)!]);
			c.ws.close();
		} finally {
			await b.close();
		}
	}, 60_000);
});

describe('bridge server: streams per user', () => {
	it('refuses a 4th stream from one user with a clear close reason while other users still connect', async () => {
		const b = await startBridge(options({ temps: { kind: 'none' }, tuning: { maxClientsPerUser: 3 } }));
		try {
			const mine = [await client(b.port), await client(b.port), await client(b.port)];
			for (const c of mine) await c.waitFor(() => c.messages[0], 'hello');
			const fourth = await client(b.port);
			const closed = await fourth.closedWith;
			expect(closed.code).toBe(CLOSE_TOO_MANY_FOR_USER);
			expect(closed.reason).toMatch(/3 bridge connections open/);
			expect(fourth.messages).toHaveLength(0);
			const other = await client(b.port, await token(60, Date.now(), { userId: 'tech-2' }));
			expect(await other.waitFor(() => other.messages[0]?.type, 'hello for another user')).toBe('hello');
			// Closing one frees its slot.
			mine[0].ws.close();
			await mine[0].closed;
			await new Promise((r) => setTimeout(r, 50));
			const again = await client(b.port);
			expect(await again.waitFor(() => again.messages[0]?.type, 'hello again')).toBe('hello');
			for (const c of [...mine, other, again]) c.ws.close();
		} finally {
			await b.close();
		}
	});
});

describe('bridge server: token expiry and renewal', () => {
	let b: RunningBridge;
	beforeAll(async () => {
		b = await startBridge(options({ temps: { kind: 'none' } }));
	});
	afterAll(async () => {
		await b?.close();
	});
	const session = { sessionTag: 'session-aaaaaaaa' };

	it('closes a stream whose token runs out without renewal, saying the session ended', async () => {
		const c = await client(b.port, await token(1, Date.now(), session));
		const hello = await c.waitFor(() => c.messages[0] as HelloMessage | undefined, 'hello');
		const closed = await c.closedWith;
		expect(closed).toEqual({ code: CLOSE_SESSION_ENDED, reason: CLOSE_SESSION_ENDED_REASON });
		// Not before the token's expiry (100 ms slack for timer granularity).
		expect(Date.now()).toBeGreaterThanOrEqual(hello.tokenExpiresAtMs! - 100);
	});

	it('keeps a renewed stream past the first token’s expiry, with the renewed role, until the new one runs out', async () => {
		const c = await client(b.port, await token(2, Date.now(), session));
		const hello = await c.waitFor(() => c.messages[0] as HelloMessage | undefined, 'hello');
		c.send({
			v: 1,
			id: 'r1',
			type: 'renew',
			token: await token(4, Date.now(), { ...session, role: 'supervisor' })
		});
		const renewed = await c.waitFor(
			() => c.messages.find((m) => m.type === 'renewed' && m.replyTo === 'r1'),
			'renewed'
		);
		if (renewed.type !== 'renewed') throw new Error('unreachable');
		expect(renewed.role).toBe('supervisor');
		expect(renewed.tokenExpiresAtMs).toBeGreaterThan(hello.tokenExpiresAtMs!);
		// Past the first expiry the stream still carries frames.
		while (Date.now() < hello.tokenExpiresAtMs! + 300) await new Promise((r) => setTimeout(r, 50));
		const n = c.frames.length;
		await c.waitFor(() => (c.frames.length > n + 2 ? true : undefined), 'frames after the first expiry');
		expect(c.ws.readyState).toBe(WebSocket.OPEN);
		const closed = await c.closedWith;
		expect(closed.code).toBe(CLOSE_SESSION_ENDED);
		expect(Date.now()).toBeGreaterThanOrEqual(renewed.tokenExpiresAtMs - 100);
	}, 15_000);

	it('refuses a renew token for another user or another session, and the stream still ends on time', async () => {
		const c = await client(b.port, await token(2, Date.now(), session));
		await c.waitFor(() => c.messages[0], 'hello');
		c.send({
			v: 1,
			id: 'x1',
			type: 'renew',
			token: await token(60, Date.now(), { ...session, userId: 'tech-2' })
		});
		c.send({
			v: 1,
			id: 'x2',
			type: 'renew',
			token: await token(60, Date.now(), { sessionTag: 'session-bbbbbbbb' })
		});
		c.send({ v: 1, id: 'x3', type: 'renew', token: 'not-a-token' });
		for (const id of ['x1', 'x2', 'x3']) {
			const err = await c.waitFor(() => ofType(c, 'error').find((m) => m.replyTo === id), `refusal ${id}`);
			expect(err.code).toBe('renew-refused');
		}
		expect(ofType(c, 'error').find((m) => m.replyTo === 'x1')?.message).toMatch(/another user or session/);
		expect(c.messages.some((m) => m.type === 'renewed')).toBe(false);
		expect((await c.closedWith).code).toBe(CLOSE_SESSION_ENDED);
	}, 15_000);
});

describe('bridge server: input coupling', () => {
	it.each([
		[true, true],
		[false, false],
		[undefined, false]
	])('a capture command started with dcCoupled %s says dcCoupled %s in the hello', async (flag, expected) => {
		const b = await startBridge(
			options({
				source: { kind: 'cmd', command: 'sleep 30', format: 's16le', dcCoupled: flag },
				temps: { kind: 'none' }
			})
		);
		try {
			const c = await client(b.port);
			const hello = await c.waitFor(() => c.messages[0] as HelloMessage | undefined, 'hello');
			expect(hello.source).toBe('cmd');
			expect(hello.dcCoupled).toBe(expected);
			c.ws.close();
		} finally {
			await b.close();
		}
	});
});
