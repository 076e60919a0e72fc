// `npm run analyze -- FILE.wav --response [--riaa] [--json]` end to end: a WAV written here (a flat
// sweep on the left, the RIAA playback curve on the right), the CLI run as a shop would run it,
// and the JSON shape the procedures issue fixes. Sources: tests/REFERENCES.md § 18.
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { encodeWav } from '../src/lib/dsp/wav';

const ROOT = fileURLToPath(new URL('../', import.meta.url));
const dir = mkdtempSync(join(tmpdir(), 'benchlight-response-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const analyze = (args: string[]) =>
	spawnSync('npx', ['tsx', 'scripts/analyze.ts', ...args], { cwd: ROOT, encoding: 'utf8', timeout: 60_000 });

// RIAA playback magnitude from its time constants 3180, 318, 75 µs (IEC 60098).
const riaa = (f: number) => {
	const w = 2 * Math.PI * f;
	return Math.hypot(1, w * 318e-6) / (Math.hypot(1, w * 3180e-6) * Math.hypot(1, w * 75e-6));
};

describe('analyze --response', () => {
	const fs = 48_000;
	const freqs = [100, 1000, 10_000];
	const left: number[] = [];
	const right: number[] = [];
	freqs.forEach((f) => {
		for (let i = 0; i < 0.2 * fs; i++) {
			const s = Math.sin((2 * Math.PI * f * i) / fs);
			left.push(0.5 * s);
			right.push((0.05 * s * riaa(f)) / riaa(1000));
		}
		for (let i = 0; i < 0.02 * fs; i++) {
			left.push(0);
			right.push(0);
		}
	});
	const file = join(dir, 'sweep.wav');
	writeFileSync(file, encodeWav([Float32Array.from(left), Float32Array.from(right)], fs));

	it('prints the issue’s JSON: steps with per-channel levels, relative and RIAA deviation, and flatness', () => {
		const r = analyze([file, '--response', '--riaa', '--json']);
		expect(r.status, r.stderr).toBe(0);
		const doc = JSON.parse(r.stdout) as {
			steps: {
				frequencyHz: number;
				channels: { levelDbv: number; relativeDb: number; riaaDeviationDb: number }[];
			}[];
			channels: { flatnessDb: number }[];
		};
		expect(Object.keys(doc).sort()).toEqual(['channels', 'steps']);
		expect(doc.steps.map((s) => Math.round(s.frequencyHz))).toEqual(freqs);
		expect(Object.keys(doc.steps[0].channels[0]).sort()).toEqual([
			'levelDbv',
			'relativeDb',
			'riaaDeviationDb'
		]);
		// 0.5 V peak = 0.3536 V rms = −9.03 dBV (20·lg(0.5/√2)), flat re 1 kHz.
		expect(doc.steps[1].channels[0].levelDbv).toBeCloseTo(-9.03, 2);
		expect(doc.steps[0].channels[0].relativeDb).toBeCloseTo(0, 3);
		// Right follows RIAA playback: +13.09 dB at 100 Hz, −13.73 dB at 10 kHz (IEC 60098 table).
		expect(Math.abs(doc.steps[0].channels[1].relativeDb - 13.09)).toBeLessThan(0.05);
		expect(Math.abs(doc.steps[2].channels[1].relativeDb + 13.73)).toBeLessThan(0.05);
		expect(Math.abs(doc.steps[2].channels[1].riaaDeviationDb)).toBeLessThan(0.05);
		// Left against the RIAA curve deviates by the curve itself: flatness ± half of 13.09 + 13.73.
		expect(doc.channels[0].flatnessDb).toBeCloseTo((13.088 + 13.734) / 2, 1);
		expect(doc.channels[1].flatnessDb).toBeLessThan(0.05);
	});

	it('refuses --riaa without --response, and says what a sweep needs when a file has none', () => {
		const bad = analyze([file, '--riaa']);
		expect(bad.status).toBe(2);
		expect(bad.stderr).toMatch(/--riaa goes with --response/);
		const silent = join(dir, 'silent.wav');
		writeFileSync(silent, encodeWav([new Float32Array(fs)], fs));
		const none = analyze([silent, '--response']);
		expect(none.status).toBe(1);
		expect(none.stderr).toMatch(/at least 150 ms/);
	});
});
