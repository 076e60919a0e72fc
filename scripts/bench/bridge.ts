// Benchmark: the bridge's capacity as a multiple of real time at 192 kHz stereo — simulate,
// encode frames, and send them over a loopback WebSocket to a client that decodes them
// (goal ≥ 20×). Runs the simulator flat out instead of paced, with back-pressure rather than
// dropping, so every frame counted was delivered.
import { performance } from 'node:perf_hooks';
import { cpus, loadavg } from 'node:os';
import { pathToFileURL } from 'node:url';
import { WebSocketServer, WebSocket } from 'ws';
import { SimSource } from '../../bridge/sources/sim';
import {
	decodeFrame,
	applySimPatch,
	DEFAULT_SIMULATOR_STATE,
	type SimulatorState
} from '../../src/lib/bridge/protocol';

const RATE_HZ = 192_000;
const CHANNELS = 2;
const BLOCK = 4096;
const DURATION_S = 10;
const WARMUP_S = 2;
const GOAL = 20;

interface Case {
	name: string;
	state: SimulatorState;
}

const CASES: Case[] = [
	{ name: 'line input, flat EQ, 1 kHz sine', state: DEFAULT_SIMULATOR_STATE },
	{
		// Everything that forces the time-domain noise path: phono stage, EQ, filters, faults.
		name: 'phono + EQ + filters + faults (worst case)',
		state: applySimPatch(DEFAULT_SIMULATOR_STATE, {
			input: 'phono',
			eqGainsDb: [3, -2, 1, 0, 4, -3, 2, 0, -4, 6],
			lowFilter: { enabled: true },
			highFilter: { enabled: true },
			faults: {
				noisySelector: 'left',
				scratchyControl: { enabled: true, moving: true, band: 5 },
				tiredFilterCap: true,
				underBias: true,
				weakOutputDevice: 'right',
				dcOffset: true,
				// Armed but not tripped (no heatsink feed here): an open relay would only make less work.
				protectionRelay: { enabled: true }
			}
		})
	}
];

function makeSource(state: SimulatorState): SimSource {
	return new SimSource({
		sampleRateHz: RATE_HZ,
		channels: CHANNELS,
		blockSize: BLOCK,
		seed: 1,
		state,
		generator: { kind: 'sine', frequencyHz: 1000, levelVrms: 0.3 }
	});
}

/** Simulate only (no encoding beyond rendering into the frame, no socket). */
/** Signal seconds per second of wall clock and per second of this process's CPU time. */
interface Ratio {
	wall: number;
	cpu: number;
}

const cpuS = (since: NodeJS.CpuUsage) => {
	const u = process.cpuUsage(since);
	return (u.user + u.system) / 1e6;
};

function simulateOnly(state: SimulatorState): Ratio {
	const src = makeSource(state);
	// Let the JIT settle before timing.
	for (let i = 0; i < (WARMUP_S * RATE_HZ) / BLOCK; i++) src.renderBlock();
	const blocks = Math.ceil((DURATION_S * RATE_HZ) / BLOCK);
	const c0 = process.cpuUsage();
	const t0 = performance.now();
	for (let i = 0; i < blocks; i++) src.renderBlock();
	const wallS = (performance.now() - t0) / 1000;
	const signalS = (blocks * BLOCK) / RATE_HZ;
	return { wall: signalS / wallS, cpu: signalS / cpuS(c0) };
}

/** Simulate + encode + send to a loopback client that decodes every frame. */
async function endToEnd(state: SimulatorState): Promise<Ratio & { frames: number }> {
	const wss = new WebSocketServer({ host: '127.0.0.1', port: 0, perMessageDeflate: false });
	await new Promise<void>((r) => wss.once('listening', () => r()));
	const port = (wss.address() as { port: number }).port;
	const serverSide = new Promise<WebSocket>((r) => wss.once('connection', (ws) => r(ws)));
	const clientWs = new WebSocket(`ws://127.0.0.1:${port}`, { perMessageDeflate: false });
	let samplesReceived = 0;
	let framesReceived = 0;
	clientWs.on('message', (data, isBinary) => {
		if (!isBinary) return;
		const f = decodeFrame(data as Buffer);
		samplesReceived += f.sampleCount;
		framesReceived++;
	});
	await new Promise<void>((r) => clientWs.once('open', () => r()));
	const ws = await serverSide;
	const src = makeSource(state);
	for (let i = 0; i < (WARMUP_S * RATE_HZ) / BLOCK; i++) src.renderBlock();
	const blocks = Math.ceil((DURATION_S * RATE_HZ) / BLOCK);
	const c0 = process.cpuUsage();
	const t0 = performance.now();
	for (let i = 0; i < blocks; i++) {
		ws.send(src.renderBlock().buffer, { binary: true });
		// Back-pressure instead of dropping, so the figure counts delivered samples only.
		while (ws.bufferedAmount > 2 * 1024 * 1024) await new Promise((r) => setImmediate(r));
	}
	while (samplesReceived < blocks * BLOCK) await new Promise((r) => setImmediate(r));
	const wallS = (performance.now() - t0) / 1000;
	const cpu = cpuS(c0);
	clientWs.close();
	ws.close();
	await new Promise<void>((r) => wss.close(() => r()));
	const signalS = samplesReceived / RATE_HZ;
	return { wall: signalS / wallS, cpu: signalS / cpu, frames: framesReceived };
}

export async function run(): Promise<void> {
	console.log(
		`bridge capacity at ${RATE_HZ / 1000} kHz × ${CHANNELS} ch, ${BLOCK}-sample frames, ${DURATION_S} s of signal per case after ${WARMUP_S} s warm-up (goal ≥ ${GOAL}× real time)`
	);
	console.log(
		`  load average now ${loadavg()[0].toFixed(1)} on ${cpus().length} cores; "cpu" divides by this process's CPU time, so it is the capacity of one free core`
	);
	for (const c of CASES) {
		const sim = simulateOnly(c.state);
		const e2e = await endToEnd(c.state);
		const verdict = e2e.cpu >= GOAL ? 'meets goal' : 'BELOW GOAL';
		console.log(`  ${c.name}`);
		console.log(
			`    simulate only             ${sim.wall.toFixed(1).padStart(6)}× wall  ${sim.cpu.toFixed(1).padStart(6)}× cpu`
		);
		console.log(
			`    simulate + encode + send  ${e2e.wall.toFixed(1).padStart(6)}× wall  ${e2e.cpu.toFixed(1).padStart(6)}× cpu  (${e2e.frames} frames decoded by the client) — ${verdict}`
		);
	}
}

if (process.argv[1] && import.meta.url === pathToFileURL(process.argv[1]).href) await run();
