// The bridge's WebSocket server: authenticates in the HTTP upgrade handler (Host, Origin,
// token) before any WebSocket exists, caps streams per user, closes a stream whose token runs
// out unrenewed, streams sample frames with per-client flow control, sends temperatures
// (backfill paced by the client's send buffer), and applies validated control messages.
// Startable in-process by tests.
import { createServer, STATUS_CODES, type IncomingMessage } from 'node:http';
import type { Duplex } from 'node:stream';
import { randomUUID } from 'node:crypto';
import { WebSocketServer, WebSocket, type RawData } from 'ws';
import { RateLimiterMemory } from 'rate-limiter-flexible';
import {
	BRIDGE_STREAM_PATH,
	CLOSE_SESSION_ENDED,
	CLOSE_SESSION_ENDED_REASON,
	CLOSE_TOO_MANY_FOR_USER,
	CONTROL_MAX_BYTES,
	DEFAULT_CLIENTS_PER_USER,
	PROBES,
	closeTooManyForUserReason,
	PROTOCOL_VERSION,
	applySimPatch,
	parseControlMessage,
	type BridgeMessage,
	type ControlMessage,
	type ErrorMessage,
	type GeneratorState,
	type HelloMessage,
	type Issue,
	type TempsKind
} from '../src/lib/bridge/protocol';
import { verifyBridgeToken, BridgeTokenError, type BridgeClaims } from '../src/lib/bridge/token';
import type { AudioSource, FrameOut } from './sources/types';
import { SimSource } from './sources/sim';
import { WavSource } from './sources/wav';
import { CmdSource, type PcmFormat } from './sources/cmd';
import { generatorMaxHz } from './sim/simulator';
import { AmplifierThermal, NOMINAL_IDLE_CURRENT_A, blockSums, type ChannelSums } from './sim/thermal';
import { TempLog } from './temps/ring';
import { SimTemps, NoTemps } from './temps/sim';
import { SerialTemps, type PortFactory } from './temps/serial';
import type { TempsSource } from './temps/types';

export type SourceSpec =
	| { kind: 'sim' }
	| { kind: 'wav'; path: string }
	| { kind: 'cmd'; command: string; format: PcmFormat; dcCoupled?: boolean };

export type TempsSpec =
	| { kind: 'sim' }
	| { kind: 'serial'; path: string; baudRate: number; portFactory?: PortFactory }
	| { kind: 'none' };

export interface BridgeOptions {
	host: string;
	/** 0 picks a free port (tests). */
	port: number;
	secret: string;
	/** Exact Origin values allowed to connect (e.g. http://127.0.0.1:3000). */
	allowedOrigins: string[];
	source: SourceSpec;
	sampleRateHz: number;
	channels: number;
	blockSize: number;
	temps: TempsSpec;
	timeScale: number;
	seed: number;
	/** Full-scale peak volts per channel for wav/cmd sources (the simulator has its own). */
	fullScaleVolts?: number[];
	log?: (msg: string) => void;
	tuning?: Partial<Tuning>;
}

export interface Tuning {
	heartbeatMs: number;
	statsMs: number;
	tempsIntervalMs: number;
	/** A client whose socket holds more than this many unsent bytes gets no new frames. */
	highWaterBytes: number;
	maxClients: number;
	/** Open streams one user may hold at once; more are closed with CLOSE_TOO_MANY_FOR_USER. */
	maxClientsPerUser: number;
	controlPerSecond: number;
	/** Readings per temps-after answer message. */
	backfillChunk: number;
	/** The next backfill chunk waits until the previous one is flushed and the socket holds less than this. */
	backfillHighWaterBytes: number;
}

export interface RunningBridge {
	readonly host: string;
	readonly port: number;
	readonly url: string;
	readonly bootId: string;
	readonly source: AudioSource;
	readonly temps: TempsSource;
	readonly tempLog: TempLog;
	readonly thermal: AmplifierThermal | null;
	clientCount(): number;
	/** Bytes queued in user space for all clients (what a stalled client can make the bridge hold). */
	bufferedBytes(): number;
	close(): Promise<void>;
}

/** Default thermal assumptions for sources other than the simulator (a typical receiver's rails). */
const DEFAULT_RAIL_VOLTS = 42;
const DEFAULT_LOAD_OHMS = 8;

interface Client {
	id: string;
	ws: WebSocket;
	claims: BridgeClaims;
	/** When this stream's token runs out (ms epoch); a renew moves it. */
	expiresAtMs: number;
	expiryTimer: ReturnType<typeof setTimeout> | null;
	/** A temps-after answer is being sent: one at a time per client. */
	backfilling: boolean;
	alive: boolean;
	framesSent: number;
	framesDropped: number;
	bytesSent: number;
	controlRejected: number;
	lastRateErrorMs: number;
	statsTimer: ReturnType<typeof setInterval> | null;
}

/** Host header values naming this bridge (anti DNS rebinding): loopback names or the configured host, with our port. */
export function allowedHosts(host: string, port: number): Set<string> {
	const h = host.toLowerCase();
	const names = new Set([
		'localhost',
		'127.0.0.1',
		'[::1]',
		h.includes(':') && !h.startsWith('[') ? `[${h}]` : h
	]);
	const out = new Set<string>();
	for (const n of names) {
		out.add(`${n}:${port}`);
		if (port === 80) out.add(n);
	}
	return out;
}

function normaliseOrigin(o: string): string {
	return o.trim().replace(/\/+$/, '');
}

export async function startBridge(options: BridgeOptions): Promise<RunningBridge> {
	const log = options.log ?? ((m: string) => console.log(`[bridge] ${m}`));
	const bytesPerSecond = options.sampleRateHz * options.channels * 4;
	const tuning: Tuning = {
		heartbeatMs: 15_000,
		statsMs: 2000,
		tempsIntervalMs: 1000,
		highWaterBytes: Math.max(256 * 1024, Math.floor(bytesPerSecond / 2)),
		maxClients: 8,
		maxClientsPerUser: DEFAULT_CLIENTS_PER_USER,
		controlPerSecond: 20,
		backfillChunk: 2000,
		backfillHighWaterBytes: 256 * 1024,
		...options.tuning
	};
	const startedMs = Date.now();
	const bootId = randomUUID();
	const allowedOrigins = new Set(options.allowedOrigins.map(normaliseOrigin));

	// ── source ──
	let source: AudioSource;
	const fsv = (channels: number) =>
		Array.from(
			{ length: channels },
			(_, i) => options.fullScaleVolts?.[i] ?? options.fullScaleVolts?.[0] ?? 1
		);
	switch (options.source.kind) {
		case 'sim':
			source = new SimSource({
				sampleRateHz: options.sampleRateHz,
				channels: options.channels,
				blockSize: options.blockSize,
				seed: options.seed,
				timeScale: options.timeScale
			});
			break;
		case 'wav':
			source = await WavSource.open(options.source.path, options.blockSize, fsv);
			break;
		case 'cmd':
			source = new CmdSource({
				command: options.source.command,
				format: options.source.format,
				sampleRateHz: options.sampleRateHz,
				channels: options.channels,
				blockSize: options.blockSize,
				fullScaleVolts: fsv(options.channels),
				dcCoupled: options.source.dcCoupled,
				report: log
			});
			break;
	}
	const sim = source instanceof SimSource ? source.simulator : null;
	let generator: GeneratorState = sim ? sim.generator : { kind: 'off' };
	let loadOhms = sim ? sim.state.loadOhms : DEFAULT_LOAD_OHMS;

	// ── temperatures ──
	const tempLog = new TempLog(startedMs);
	let thermal: AmplifierThermal | null = null;
	let temps: TempsSource;
	switch (options.temps.kind) {
		case 'sim':
			thermal = new AmplifierThermal(options.timeScale);
			temps = new SimTemps(thermal, tempLog, options.seed, tuning.tempsIntervalMs);
			break;
		case 'serial':
			temps = new SerialTemps(
				tempLog,
				options.temps.path,
				options.temps.baudRate,
				options.temps.portFactory,
				log
			);
			break;
		case 'none':
			temps = new NoTemps();
			break;
	}

	// ── clients ──
	const clients = new Set<Client>();
	const limiter = new RateLimiterMemory({ points: tuning.controlPerSecond, duration: 1 });
	const wss = new WebSocketServer({
		noServer: true,
		maxPayload: CONTROL_MAX_BYTES,
		perMessageDeflate: false,
		clientTracking: false
	});

	const sendJson = (c: Client, msg: BridgeMessage) => {
		if (c.ws.readyState === WebSocket.OPEN) c.ws.send(JSON.stringify(msg));
	};
	const broadcast = (msg: BridgeMessage) => {
		const text = JSON.stringify(msg);
		for (const c of clients) if (c.ws.readyState === WebSocket.OPEN) c.ws.send(text);
	};
	const sendError = (
		c: Client,
		code: ErrorMessage['code'],
		message: string,
		replyTo?: string | number,
		issues?: Issue[]
	) => {
		c.controlRejected++;
		sendJson(c, {
			type: 'error',
			code,
			message,
			...(issues ? { issues } : {}),
			...(replyTo !== undefined ? { replyTo } : {})
		});
	};
	const stateMessage = (replyTo?: string | number): BridgeMessage => ({
		type: 'state',
		generator,
		...(sim ? { simulator: sim.state } : {}),
		loadOhms,
		...(replyTo !== undefined ? { replyTo } : {})
	});

	// One array reused for every frame's channel sums: this runs once per audio frame.
	const sums: ChannelSums[] = [];
	let relayWas = sim?.relayOpen ?? null;
	const onFrame = (frame: FrameOut) => {
		if (thermal) {
			const params = sim
				? sim.amplifierParams()
				: { railVolts: DEFAULT_RAIL_VOLTS, loadOhms, idleCurrentA: NOMINAL_IDLE_CURRENT_A };
			thermal.advance(
				frame.sampleCount / source.sampleRateHz,
				blockSums(frame.samples, source.channels, frame.sampleCount, source.fullScaleVolts, sums),
				params
			);
			// The protection-relay fault watches the simulated heatsinks.
			sim?.setHeatsinkCelsius(thermal.heatsinks[0].tempC, thermal.heatsinks[1].tempC);
		}
		if (sim && sim.relayOpen !== relayWas) {
			relayWas = sim.relayOpen;
			log(relayWas ? `protection relay open (${relayWas})` : 'protection relay closed');
		}
		for (const c of clients) {
			if (c.ws.readyState !== WebSocket.OPEN) continue;
			// Whole frames only: a client that cannot keep up loses frames (seq shows the gap), never the source.
			if (c.ws.bufferedAmount + frame.buffer.byteLength > tuning.highWaterBytes) {
				c.framesDropped++;
				continue;
			}
			c.ws.send(frame.buffer, { binary: true });
			c.framesSent++;
			c.bytesSent += frame.buffer.byteLength;
		}
	};

	const unsubscribeTemps = tempLog.onReadings((readings) => broadcast({ type: 'temps', bootId, readings }));

	// The generator's deadman: a soak asks for the drive to stop on its own at the planned end.
	let deadman: NodeJS.Timeout | null = null;
	const armDeadman = (offAfterS: number | undefined) => {
		if (deadman) clearTimeout(deadman);
		deadman = null;
		if (!offAfterS || !sim) return;
		deadman = setTimeout(() => {
			deadman = null;
			sim.setGenerator({ kind: 'off' });
			generator = sim.generator;
			log(`generator off: deadman after ${offAfterS} s`);
			broadcast(stateMessage());
		}, offAfterS * 1000);
	};

	const handleControl = (c: Client, msg: ControlMessage) => {
		const replyTo = msg.id;
		switch (msg.type) {
			case 'generator': {
				if (!sim) return sendError(c, 'unsupported', `the ${source.kind} source has no generator`, replyTo);
				const maxHz = generatorMaxHz(msg.generator);
				if (maxHz >= source.sampleRateHz / 2)
					return sendError(
						c,
						'out-of-range',
						`${maxHz} Hz is above the Nyquist frequency (${source.sampleRateHz / 2} Hz)`,
						replyTo
					);
				sim.setGenerator(msg.generator);
				generator = sim.generator;
				armDeadman(msg.generator.kind === 'off' ? undefined : msg.offAfterS);
				log(`generator ${JSON.stringify(generator)} (user ${c.claims.userId})`);
				return broadcast(stateMessage(replyTo));
			}
			case 'load':
				loadOhms = msg.loadOhms;
				if (sim) sim.setState({ ...sim.state, loadOhms: msg.loadOhms });
				return broadcast(stateMessage(replyTo));
			case 'input':
			case 'sim': {
				if (!sim)
					return sendError(c, 'unsupported', `the ${source.kind} source has no simulator controls`, replyTo);
				const { v: _v, id: _id, type: _t, ...patch } = msg;
				let next;
				try {
					next = applySimPatch(sim.state, patch);
				} catch {
					return sendError(c, 'bad-message', 'simulator settings out of range', replyTo);
				}
				sim.setState(next);
				loadOhms = next.loadOhms;
				return broadcast(stateMessage(replyTo));
			}
			case 'temps-after':
				if (c.backfilling)
					return sendError(
						c,
						'busy',
						'a temperature backfill is still being sent to this client; ask again after the chunk marked complete',
						replyTo
					);
				void backfill(c, msg.seq, replyTo);
				return;
			case 'renew':
				verifyBridgeToken(options.secret, msg.token).then(
					(next) => {
						if (c.ws.readyState !== WebSocket.OPEN) return;
						if (next.userId !== c.claims.userId || next.sessionTag !== c.claims.sessionTag)
							return sendError(c, 'renew-refused', 'that token is for another user or session', replyTo);
						if (next.role !== c.claims.role)
							log(`user ${c.claims.userId}: role ${c.claims.role} → ${next.role} on renewal`);
						c.claims = { userId: next.userId, role: next.role, sessionTag: next.sessionTag };
						c.expiresAtMs = next.expiresAt.getTime();
						armExpiry(c);
						sendJson(c, {
							type: 'renewed',
							tokenExpiresAtMs: c.expiresAtMs,
							serverTimeMs: Date.now(),
							role: next.role,
							...(replyTo !== undefined ? { replyTo } : {})
						});
					},
					(e) =>
						sendError(
							c,
							'renew-refused',
							e instanceof BridgeTokenError ? e.message : 'the renewal token was refused',
							replyTo
						)
				);
				return;
		}
	};

	/** Close the stream when its token runs out, unless a renew moves the time first. */
	const armExpiry = (c: Client) => {
		if (c.expiryTimer) clearTimeout(c.expiryTimer);
		c.expiryTimer = setTimeout(
			() => {
				c.expiryTimer = null;
				log(`user ${c.claims.userId}: token ran out without renewal; closing the stream`);
				c.ws.close(CLOSE_SESSION_ENDED, CLOSE_SESSION_ENDED_REASON);
			},
			Math.max(0, c.expiresAtMs - Date.now())
		);
	};

	/** Resolves true once the socket has room for more backfill, false if it closes first. */
	const roomFor = async (c: Client): Promise<boolean> => {
		let waitMs = 5;
		while (c.ws.readyState === WebSocket.OPEN && c.ws.bufferedAmount > tuning.backfillHighWaterBytes) {
			await new Promise((r) => setTimeout(r, waitMs));
			waitMs = Math.min(100, waitMs * 2);
		}
		return c.ws.readyState === WebSocket.OPEN;
	};

	/** Send and resolve once the bytes have left user space (true), or the socket failed (false). */
	const sendFlushed = (c: Client, text: string): Promise<boolean> =>
		new Promise((resolve) => {
			if (c.ws.readyState !== WebSocket.OPEN) return resolve(false);
			const onClose = () => resolve(false);
			c.ws.once('close', onClose);
			c.ws.send(text, (err) => {
				c.ws.off('close', onClose);
				resolve(!err);
			});
		});

	/**
	 * Answer temps-after in chunks, oldest first. Each chunk waits until the previous one has been
	 * flushed and the client's send buffer has room, so a stalled client holds at most one chunk
	 * of backfill in the bridge, however much history it asks for.
	 */
	const backfill = async (c: Client, afterSeq: number, replyTo: string | number | undefined) => {
		c.backfilling = true;
		try {
			const oldestSeq = tempLog.ring.oldestSeq();
			let after = afterSeq;
			for (;;) {
				if (!(await roomFor(c))) return;
				const readings = tempLog.ring.after(after, tuning.backfillChunk);
				const complete = readings.length < tuning.backfillChunk;
				const msg: BridgeMessage = {
					type: 'temps',
					bootId,
					readings,
					backfill: true,
					complete,
					oldestSeq,
					...(replyTo !== undefined ? { replyTo } : {})
				};
				if (!(await sendFlushed(c, JSON.stringify(msg))) || complete) return;
				after = readings[readings.length - 1].seq;
			}
		} finally {
			c.backfilling = false;
		}
	};

	const onMessage = (c: Client, data: RawData, isBinary: boolean) => {
		if (isBinary) return sendError(c, 'binary-not-accepted', 'control messages are JSON text');
		limiter.consume(c.id).then(
			() => {
				if (c.ws.readyState !== WebSocket.OPEN) return;
				const text = Array.isArray(data)
					? Buffer.concat(data).toString('utf8')
					: Buffer.from(data as ArrayBuffer).toString('utf8');
				const parsed = parseControlMessage(text);
				if (!parsed.ok)
					return sendError(
						c,
						parsed.error.includes('JSON') ? 'bad-json' : 'bad-message',
						parsed.error,
						undefined,
						parsed.issues
					);
				try {
					handleControl(c, parsed.message);
				} catch (e) {
					// Never let one message take the bridge down; report it to the sender.
					log(`control message failed: ${(e as Error).message}`);
					sendError(c, 'bad-message', 'the bridge could not apply that message');
				}
			},
			() => {
				c.controlRejected++;
				const now = Date.now();
				if (now - c.lastRateErrorMs > 1000) {
					c.lastRateErrorMs = now;
					sendJson(c, {
						type: 'error',
						code: 'rate-limited',
						message: `more than ${tuning.controlPerSecond} control messages a second`
					});
				}
			}
		);
	};

	const onConnection = (ws: WebSocket, claims: BridgeClaims & { expiresAt: Date }) => {
		// Counted here, synchronously with adding, so concurrent upgrades cannot overshoot.
		let mine = 0;
		for (const other of clients) if (other.claims.userId === claims.userId) mine++;
		if (mine >= tuning.maxClientsPerUser) {
			ws.on('error', () => {});
			log(`user ${claims.userId}: refused a stream beyond ${tuning.maxClientsPerUser}`);
			ws.close(CLOSE_TOO_MANY_FOR_USER, closeTooManyForUserReason(tuning.maxClientsPerUser));
			return;
		}
		const c: Client = {
			id: randomUUID(),
			ws,
			claims: { userId: claims.userId, role: claims.role, sessionTag: claims.sessionTag },
			expiresAtMs: claims.expiresAt.getTime(),
			expiryTimer: null,
			backfilling: false,
			alive: true,
			framesSent: 0,
			framesDropped: 0,
			bytesSent: 0,
			controlRejected: 0,
			lastRateErrorMs: 0,
			statsTimer: null
		};
		clients.add(c);
		ws.on('pong', () => {
			c.alive = true;
		});
		ws.on('message', (data, isBinary) => onMessage(c, data, isBinary));
		ws.on('error', () => {
			/* 'close' follows and cleans up */
		});
		ws.on('close', () => {
			if (c.statsTimer) clearInterval(c.statsTimer);
			c.statsTimer = null;
			if (c.expiryTimer) clearTimeout(c.expiryTimer);
			c.expiryTimer = null;
			clients.delete(c);
			void limiter.delete(c.id).catch(() => {});
		});
		const hello: HelloMessage = {
			type: 'hello',
			protocolVersion: PROTOCOL_VERSION,
			bootId,
			sampleRateHz: source.sampleRateHz,
			channels: source.channels,
			blockSize: source.blockSize,
			fullScaleVolts: source.fullScaleVolts,
			source: source.kind,
			sourceLabel: source.label,
			temps: temps.kind as TempsKind,
			probes: temps.kind === 'none' ? [] : PROBES.map((p) => ({ ...p })),
			...(sim ? { simulator: sim.state, seed: sim.seed } : {}),
			generator,
			timeScale: options.timeScale,
			lastTempSeq: tempLog.ring.lastSeq(),
			serverTimeMs: Date.now(),
			dcCoupled: source.dcCoupled,
			tokenExpiresAtMs: c.expiresAtMs
		};
		sendJson(c, hello);
		armExpiry(c);
		const latest = tempLog.ring.latest();
		if (latest.length) sendJson(c, { type: 'temps', bootId, readings: latest });
		c.statsTimer = setInterval(
			() =>
				sendJson(c, {
					type: 'stats',
					framesSent: c.framesSent,
					framesDropped: c.framesDropped,
					bytesSent: c.bytesSent,
					controlRejected: c.controlRejected,
					tempsBadLines: temps.badLines,
					sourceOverruns: source.overruns,
					uptimeS: Math.round((Date.now() - startedMs) / 1000)
				}),
			tuning.statsMs
		);
	};

	// ── HTTP server and upgrade gate ──
	let boundPort = options.port;
	const hostOk = (req: IncomingMessage) => {
		const h = req.headers.host?.toLowerCase();
		return !!h && allowedHosts(options.host, boundPort).has(h);
	};

	const server = createServer((req, res) => {
		const path = (req.url ?? '/').split('?')[0];
		if (!hostOk(req)) {
			res.writeHead(403, { 'content-type': 'text/plain' }).end('Host not allowed');
			return;
		}
		if (req.method === 'GET' && path === '/health') {
			res.writeHead(200, { 'content-type': 'application/json', 'cache-control': 'no-store' });
			res.end(JSON.stringify({ ok: true, protocolVersion: PROTOCOL_VERSION }));
			return;
		}
		res.writeHead(404, { 'content-type': 'text/plain' }).end('Not found');
	});
	server.headersTimeout = 10_000;
	server.requestTimeout = 10_000;

	const refuse = (socket: Duplex, status: number, message: string) => {
		if (socket.destroyed) return;
		const body = `${message}\n`;
		socket.once('finish', () => socket.destroy());
		socket.end(
			`HTTP/1.1 ${status} ${STATUS_CODES[status] ?? ''}\r\nConnection: close\r\nContent-Type: text/plain; charset=utf-8\r\nContent-Length: ${Buffer.byteLength(body)}\r\nCache-Control: no-store\r\n\r\n${body}`
		);
	};

	server.on('upgrade', (req: IncomingMessage, socket: Duplex, head: Buffer) => {
		socket.on('error', () => socket.destroy());
		let url: URL;
		try {
			url = new URL(req.url ?? '/', 'http://bridge.invalid');
		} catch {
			return refuse(socket, 400, 'Bad request');
		}
		if (url.pathname !== BRIDGE_STREAM_PATH) return refuse(socket, 404, 'Not found');
		if (!hostOk(req)) return refuse(socket, 403, 'Host not allowed');
		const origin = req.headers.origin;
		if (!origin || !allowedOrigins.has(normaliseOrigin(origin)))
			return refuse(socket, 403, 'Origin not allowed');
		if (clients.size >= tuning.maxClients) return refuse(socket, 503, 'Too many clients');
		verifyBridgeToken(options.secret, url.searchParams.get('token')).then(
			(claims) => {
				if (socket.destroyed) return;
				wss.handleUpgrade(req, socket, head, (ws) => onConnection(ws, claims));
			},
			(e) =>
				refuse(socket, 401, e instanceof BridgeTokenError ? `Unauthorized: ${e.message}` : 'Unauthorized')
		);
	});

	const heartbeat = setInterval(() => {
		for (const c of clients) {
			if (!c.alive) {
				c.ws.terminate();
				continue;
			}
			c.alive = false;
			try {
				c.ws.ping();
			} catch {
				c.ws.terminate();
			}
		}
	}, tuning.heartbeatMs);

	await new Promise<void>((resolve, reject) => {
		server.once('error', reject);
		server.listen(options.port, options.host, () => {
			server.off('error', reject);
			resolve();
		});
	});
	const addr = server.address();
	boundPort = typeof addr === 'object' && addr ? addr.port : options.port;

	await source.start(onFrame);
	await temps.start();

	const hostForUrl = options.host.includes(':') ? `[${options.host}]` : options.host;
	let closed = false;
	return {
		host: options.host,
		port: boundPort,
		url: `ws://${hostForUrl}:${boundPort}`,
		bootId,
		source,
		temps,
		tempLog,
		thermal,
		clientCount: () => clients.size,
		bufferedBytes: () => {
			let n = 0;
			for (const c of clients) n += c.ws.bufferedAmount;
			return n;
		},
		async close() {
			if (closed) return;
			closed = true;
			clearInterval(heartbeat);
			if (deadman) clearTimeout(deadman);
			unsubscribeTemps();
			await source.stop();
			await temps.stop();
			for (const c of clients) {
				if (c.statsTimer) clearInterval(c.statsTimer);
				if (c.expiryTimer) clearTimeout(c.expiryTimer);
				c.ws.terminate();
			}
			clients.clear();
			await new Promise<void>((resolve) => wss.close(() => resolve()));
			server.closeAllConnections();
			await new Promise<void>((resolve) => server.close(() => resolve()));
		}
	};
}
