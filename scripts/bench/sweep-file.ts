// Recorded-sweep analysis (`npm run analyze -- FILE.wav --response`): a 10-minute 96 kHz stereo
// stepped sweep (12 points per octave, 20 Hz–20 kHz, repeated; 250 ms steps with 20 ms gaps, a
// little noise), analysed whole in one run, reported as a multiple of real time. Not a test: the
// figure depends on the machine.
import { analyzeSweepRecording } from '../../src/lib/procedures/sweep-file';
import { sweepFrequencies } from '../../src/lib/procedures/sweep';

const FS = 96_000;
const DURATION_S = 600;
const STEP_S = 0.25;
const GAP_S = 0.02;

function makeSweep(): { channels: Float32Array[]; steps: number } {
	const n = DURATION_S * FS;
	const left = new Float32Array(n);
	const right = new Float32Array(n);
	const freqs = sweepFrequencies(12);
	let seed = 7;
	let pos = 0;
	let steps = 0;
	let phase = 0;
	for (let k = 0; pos < n; k++) {
		const f = freqs[k % freqs.length];
		const len = Math.min(n - pos, Math.round(STEP_S * FS));
		const w = (2 * Math.PI * f) / FS;
		for (let i = 0; i < len; i++, pos++) {
			seed = (seed * 1664525 + 1013904223) >>> 0;
			const s = Math.sin(phase);
			phase += w;
			left[pos] = 0.5 * s + 1e-4 * (seed / 2 ** 32 - 0.5);
			right[pos] = 0.25 * s;
		}
		if (len === Math.round(STEP_S * FS)) steps++;
		pos += Math.round(GAP_S * FS);
	}
	return { channels: [left, right], steps };
}

export async function run(): Promise<void> {
	const t0 = performance.now();
	const { channels, steps } = makeSweep();
	const madeMs = performance.now() - t0;
	const t1 = performance.now();
	const r = analyzeSweepRecording(channels, FS);
	const ms = performance.now() - t1;
	console.log(
		`  file: ${DURATION_S} s, ${FS} Hz, 2 ch, ${steps} steps (synthesised in ${(madeMs / 1000).toFixed(1)} s)`
	);
	console.log(`  analysis: ${(ms / 1000).toFixed(2)} s for ${r.steps.length} steps found`);
	console.log(`  speed: ${(DURATION_S / (ms / 1000)).toFixed(0)}× real time`);
}
