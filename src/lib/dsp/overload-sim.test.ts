// The overload flag on the bridge simulator's "weak output device" fault: one output transistor that
// cannot pass more than WEAK_DEVICE_MAX_CURRENT_A clips one half of the wave at I·R (P = V²/R, §5),
// which the analysis must flag at 12 W into 8 Ω where THD alone said little before (REFERENCES.md §14).
import { describe, expect, it } from 'vitest';
import { DEFAULT_SIMULATOR_STATE, WEAK_DEVICE_MAX_CURRENT_A, applySimPatch } from '$lib/bridge/protocol';
import { analyzeFrames } from './analyzer';
import { Simulator, SIM_FULL_SCALE_VOLTS } from '../../../bridge/sim/simulator';

const FS = 48_000;
const N = 65_536;

function measure(powerW: number) {
	const state = applySimPatch(DEFAULT_SIMULATOR_STATE, { faults: { weakOutputDevice: 'right' } });
	// Generator level for powerW into 8 Ω at the default volume: V = √(P·R) (§5).
	const levelVrms = Math.sqrt(powerW * 8) / 10 ** (DEFAULT_SIMULATOR_STATE.volumeDb / 20);
	const sim = new Simulator({
		sampleRateHz: FS,
		channels: 2,
		seed: 1,
		state,
		generator: { kind: 'sine', frequencyHz: 1000, levelVrms },
		timeScale: 1
	});
	sim.render(new Float32Array(FS / 5), FS / 10);
	const raw = new Float32Array(2 * N);
	sim.render(raw, N);
	const left = new Float32Array(N);
	const right = new Float32Array(N);
	for (let i = 0; i < N; i++) {
		left[i] = raw[2 * i];
		right[i] = raw[2 * i + 1];
	}
	return analyzeFrames([left, right], FS, SIM_FULL_SCALE_VOLTS, { loadOhms: 8 });
}

describe('weak output device → overload flag', () => {
	it('12 W into 8 Ω: the weak channel is flagged for one clipped half; the healthy one is not', () => {
		const r = measure(12);
		const [healthy, weak] = r.channels;
		expect(healthy.clipping.clipped).toBe(false);
		expect(weak.clipping.clipped).toBe(true);
		expect(weak.clipping.reason).toMatch(/half only/);
		// Clip at I·R = 1.5 A × 8 Ω = 12 V of a 13.86 V peak (√(2·12·8)); a sine spends
		// (π − 2·asin c)/(2π) of its period above c (plain trigonometry): ≈ 16.7 %.
		const c = (WEAK_DEVICE_MAX_CURRENT_A * 8) / Math.sqrt(2 * 12 * 8);
		const share = (100 * (Math.PI - 2 * Math.asin(c))) / (2 * Math.PI);
		expect(Math.abs(weak.clipping.flatTopPercent! - share)).toBeLessThan(3);
	});

	it('5 W (below the current limit): nothing flagged', () => {
		const r = measure(5);
		for (const ch of r.channels) expect(ch.clipping.clipped).toBe(false);
	});
});
