// Sources named beside the checks are described in tests/REFERENCES.md § 18 (bench procedures).
// A job's WAV read as a recorded sweep, on an analysis-pool worker (the bundled worker script, as
// the server runs it): the same figures as the CLI, and a refusal that says what a sweep needs.
import { afterAll, describe, expect, it } from 'vitest';
import { encodeWav } from '$lib/dsp/wav';
import { AnalysisPool } from './analysis-pool';
import { analyseSweepWav } from './sweep-analysis';
import { AnalysisRefusal } from './snapshot-analysis';

const pool = new AnalysisPool({ threads: 1 });
afterAll(() => pool.close());

/** 100 Hz, 1 kHz and 10 kHz for 200 ms each; 10 kHz at half the level (−6.02 dB, 20·lg 0.5). */
function sweepWav(): Uint8Array {
	const fs = 48_000;
	const step = 9600;
	const x = new Float32Array(3 * step);
	[100, 1000, 10_000].forEach((f, k) => {
		const a = f === 10_000 ? 0.25 : 0.5;
		for (let i = 0; i < step; i++) x[k * step + i] = a * Math.sin((2 * Math.PI * f * i) / fs);
	});
	return encodeWav([x], fs);
}

describe('recorded sweep on the analysis pool', () => {
	it('answers the steps and the flatness on a worker, as the direct call does', async () => {
		const direct = analyseSweepWav({ wav: sweepWav(), riaa: false, iecRolloff: false });
		const r = pool.reserve();
		try {
			const viaPool = await r.sweep({ wav: sweepWav(), riaa: false, iecRolloff: false });
			expect(viaPool).toEqual(direct);
		} finally {
			r.release();
		}
		expect(direct.steps.map((s) => Math.round(s.frequencyHz))).toEqual([100, 1000, 10_000]);
		expect(direct.steps[2].channels[0].relativeDb).toBeCloseTo(-6.0206, 3); // 20·lg 0.5
		expect(direct.channels[0].flatnessDb).toBeCloseTo(3.0103, 3); // ± half of 6.02 dB
	});

	it('refuses a file that is no sweep, naming what a sweep needs, also through the pool', async () => {
		const tone = encodeWav([Float32Array.from({ length: 48_000 }, () => 0)], 48_000);
		expect(() => analyseSweepWav({ wav: tone, riaa: false, iecRolloff: false })).toThrow(AnalysisRefusal);
		const r = pool.reserve();
		try {
			await expect(r.sweep({ wav: tone, riaa: false, iecRolloff: false })).rejects.toThrow(/at least 150 ms/);
		} finally {
			r.release();
		}
		expect(() => analyseSweepWav({ wav: new Uint8Array(10), riaa: false, iecRolloff: false })).toThrow(
			/cannot be read/
		);
	});
});
