// The live worker and the server's analysis must report the same stereo figures: the real worker
// module is driven through its message handler (a stand-in `self`) and compared with analyzeFrames.
import { beforeAll, describe, expect, it, vi } from 'vitest';
import { analyzeFrames, CROSSTALK_MIN_BALANCE_DB } from '$lib/dsp';
import {
	DEFAULT_SETTINGS,
	stimulusFromGenerator,
	type AnalysisSettings,
	type FromWorker,
	type ToWorker,
	type WorkerResult
} from './analysis-messages';

const RATE = 48_000;
const FFT = 16_384;
const posted: FromWorker[] = [];
let send: (m: ToWorker) => void;

beforeAll(async () => {
	const fake: { postMessage: (m: FromWorker) => void; onmessage: ((ev: { data: ToWorker }) => void) | null } =
		{
			postMessage: (m) => posted.push(m),
			onmessage: null
		};
	vi.stubGlobal('self', fake);
	await import('./analysis.worker');
	send = (m) => fake.onmessage!({ data: m });
});

function sine(n: number, f: number, a: number, ph = 0): Float32Array {
	const out = new Float32Array(n);
	for (let i = 0; i < n; i++) out[i] = a * Math.sin(2 * Math.PI * f * (i / RATE) + ph);
	return out;
}

/** A bridge frame: 32-byte header (left zero: the worker takes the fields from the message) + interleaved float32. */
function frame(left: Float32Array, right: Float32Array): ToWorker {
	const n = left.length;
	const buf = new ArrayBuffer(32 + n * 2 * 4);
	const f = new Float32Array(buf);
	for (let i = 0; i < n; i++) {
		f[8 + 2 * i] = left[i];
		f[8 + 2 * i + 1] = right[i];
	}
	return {
		type: 'frame',
		buffer: buf,
		receivedAtMs: 0,
		channels: 2,
		sampleRateHz: RATE,
		sampleCount: n,
		flags: 0
	};
}

/** Feed one FFT frame of audio from a fresh configuration and return the worker's result. */
function live(left: Float32Array, right: Float32Array, patch: Partial<AnalysisSettings> = {}): WorkerResult {
	posted.length = 0;
	send({
		type: 'config',
		sampleRateHz: RATE,
		channels: 2,
		fullScaleVolts: [2, 2],
		settings: { ...DEFAULT_SETTINGS, fftSize: FFT, averaging: 'none', loadOhms: null, ...patch }
	});
	send(frame(left, right));
	const r = posted.find((m): m is WorkerResult => m.type === 'result');
	if (!r) throw new Error(`no result: ${JSON.stringify(posted.filter((m) => m.type === 'error'))}`);
	return r;
}

describe('analysis worker stereo figures', () => {
	it('one channel driven, −80 dB leakage: the same crosstalk live and saved', () => {
		const left = sine(FFT, 1000.2, 0.8);
		const right = sine(FFT, 1000.2, 0.8e-4, 1); // 20·lg(0.8e-4/0.8) = −80 dB
		const r = live(left, right);
		const saved = analyzeFrames([left, right], RATE, [2, 2], { fftSize: FFT });
		expect(saved.crosstalkDb).toBeCloseTo(-80, 2); // 20·lg(1e-4) = −80 dB (definition of the dB)
		expect(r.crosstalkDb).not.toBeNull();
		expect(r.crosstalkDb!).toBeCloseTo(saved.crosstalkDb!, 6);
		expect(r.balanceDb!).toBeCloseTo(saved.balanceDb!, 6);
	});

	it('both channels driven: no crosstalk live or saved', () => {
		const left = sine(FFT, 1000.2, 0.8);
		// 3 dB apart: well inside CROSSTALK_MIN_BALANCE_DB, so the quieter channel is a signal, not leakage.
		const right = sine(FFT, 1000.2, 0.8 * 10 ** (-3 / 20), 0.4);
		expect(3).toBeLessThan(CROSSTALK_MIN_BALANCE_DB);
		const r = live(left, right);
		const saved = analyzeFrames([left, right], RATE, [2, 2], { fftSize: FFT });
		expect(saved.crosstalkDb).toBeUndefined();
		expect(r.crosstalkDb).toBeNull();
		expect(r.balanceDb!).toBeCloseTo(3, 3); // 20·lg(10^(3/20)) = 3 dB (definition)
		expect(saved.balanceDb!).toBeCloseTo(3, 3);
	});
});

describe('analysis worker stimulus', () => {
	it('generator off → stimulus none: hum reads as noise, tone figures null, same as saved', () => {
		const settings = stimulusFromGenerator({ kind: 'off' });
		expect(settings.stimulus).toBe('none');
		// 1 mV of 100 Hz hum at 2 V full scale on both channels.
		const hum = sine(FFT, 100, (1e-3 / 2) * Math.SQRT2);
		const r = live(hum, hum, settings);
		const saved = analyzeFrames([hum, hum], RATE, [2, 2], { fftSize: FFT, stimulus: 'none' });
		for (const [i, ch] of r.results.entries()) {
			expect(ch.signal).toBe(false);
			expect(ch.thdnPercent).toBeNull();
			expect(ch.frequencyHz).toBeNull();
			// A sine's rms is peak/√2: the whole 1 mV is noise now, not a removed "fundamental".
			expect(ch.noiseVrms).toBeCloseTo(1e-3, 6);
			expect(ch.noiseVrms).toBeCloseTo(saved.channels[i].noiseVrms, 9);
			expect(ch.hum.find((h) => h.order === 2)?.levelVrms).toBeCloseTo(1e-3, 6);
		}
		expect(r.crosstalkDb).toBeNull();
	});

	it('a sine generator sets the expected frequency: a 100 Hz hum under a 1 kHz stimulus is "no signal"', () => {
		const settings = stimulusFromGenerator({ kind: 'sine', frequencyHz: 1000, levelVrms: 0.5 });
		expect(settings).toMatchObject({ stimulus: 'tone', expectedFrequencyHz: 1000 });
		const hum = sine(FFT, 100, 1e-3);
		const r = live(hum, hum, settings);
		expect(r.results[0].signal).toBe(false);
		expect(r.results[0].signalReason).toMatch(/not the 1000 Hz stimulus/);
		expect(r.results[0].thdPercent).toBeNull();
	});
});
