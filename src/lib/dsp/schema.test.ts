// The result schema accepts what the analyser produces and rejects damaged results.
import { describe, expect, it } from 'vitest';
import { analyzeFrames } from './analyzer';
import { analysisOptionsSchema, analysisResultSchema, channelResultSchema } from './schema';

describe('result schema', () => {
	const fs = 48000;
	const x = new Float32Array(8192).map((_, i) => 0.5 * Math.sin((2 * Math.PI * 1000 * i) / fs));
	const res = analyzeFrames([x, x.map((v) => v * 0.001)], fs, 2, {
		loadOhms: 8,
		referenceVrms: 0.5,
		weighting: 'a'
	});

	it('accepts an analysis result (survives a JSON round trip)', () => {
		const parsed = analysisResultSchema.parse(JSON.parse(JSON.stringify(res)));
		expect(parsed.conditions.weighting).toBe('a');
		expect(parsed.conditions.loadOhms).toBe(8);
		expect(parsed.channels[0].powerW).toBeCloseTo(parsed.channels[0].levelVrms ** 2 / 8, 12);
		expect(parsed.crosstalkDb).toBeCloseTo(-60, 3);
	});

	it('rejects non-finite numbers, unknown windows and missing fields', () => {
		const bad = structuredClone(res);
		bad.channels[0].thdnDb = Number.NEGATIVE_INFINITY;
		expect(analysisResultSchema.safeParse(bad).success).toBe(false);
		const bad2 = structuredClone(res) as unknown as { conditions: { window: string } };
		bad2.conditions.window = 'kaiser';
		expect(analysisResultSchema.safeParse(bad2).success).toBe(false);
		const { levelVrms: _dropped, ...missing } = res.channels[0];
		void _dropped;
		expect(channelResultSchema.safeParse(missing).success).toBe(false);
	});

	it('validates options from outside', () => {
		expect(
			analysisOptionsSchema.safeParse({ fftSize: 65536, bandHz: [22, 22000], weighting: 'a' }).success
		).toBe(true);
		expect(analysisOptionsSchema.safeParse({ fftSize: 1000 }).success).toBe(false);
		expect(analysisOptionsSchema.safeParse({ bandHz: [20000, 20] }).success).toBe(false);
	});
});
