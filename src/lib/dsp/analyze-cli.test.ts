// The analyze CLI end to end: sox makes the file, `npx tsx scripts/analyze.ts` measures it, JSON vs truth.
import { spawn, spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { encodeWav } from './wav';

const ROOT = fileURLToPath(new URL('../../../', import.meta.url));
const SOX = '/usr/bin/sox';
const dir = mkdtempSync(join(tmpdir(), 'benchlight-cli-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function run(cmd: string, args: string[]) {
	return spawnSync(cmd, args, { cwd: ROOT, encoding: 'utf8', timeout: 60_000 });
}
function sox(args: string[]): void {
	const r = run(SOX, args);
	if (r.status !== 0) throw new Error(`sox failed: ${r.stderr}`);
}
const analyze = (args: string[]) => run('npx', ['tsx', 'scripts/analyze.ts', ...args]);

/** The same, without blocking, so the error cases can share the few seconds tsx needs to start. */
function analyzeAsync(args: string[]): Promise<{ status: number | null; stdout: string; stderr: string }> {
	return new Promise((resolve) => {
		const p = spawn('npx', ['tsx', 'scripts/analyze.ts', ...args], { cwd: ROOT });
		let stdout = '';
		let stderr = '';
		p.stdout.on('data', (d) => (stdout += d));
		p.stderr.on('data', (d) => (stderr += d));
		p.on('close', (status) => resolve({ status, stdout, stderr }));
	});
}

// ch 0: 1234.5 Hz at 0.25 peak with its 2nd harmonic at −40 dBc; ch 1: 440 Hz at 0.25 with the 3rd at −40 dBc.
const file = join(dir, 'two-tone-24bit.wav');
beforeAll(() => {
	const a = join(dir, 'a.wav');
	const b = join(dir, 'b.wav');
	// Two 3 s, 44.1 kHz float stereo tones (left, right) at a given peak level.
	const synth = (out: string, leftHz: string, rightHz: string, peak: string) =>
		sox([
			...'-n -r 44100 -e floating-point -b 32 -c 2'.split(' '),
			out,
			'synth',
			'3',
			'sine',
			leftHz,
			'sine',
			rightHz,
			'vol',
			peak
		]);
	synth(a, '1234.5', '440', '0.25');
	synth(b, '2469', '1320', '0.0025');
	sox(['-D', '-m', '-v', '1', a, '-v', '1', b, '-b', '24', '-e', 'signed-integer', file]);
});

interface CliChannel {
	channel: number;
	frequencyHz: number;
	levelVrms: number;
	levelDbv: number;
	levelDbu: number;
	thdPercent: number;
	thdDb: number;
	thdnPercent: number;
	thdnDb: number;
	noiseVrms: number;
	snrDb: number;
	powerW?: number;
	harmonics: { order: number; frequencyHz: number; levelDbc: number }[];
}

describe('scripts/analyze.ts', () => {
	it('JSON matches the analytic truth of a sox-made 24-bit stereo file', { timeout: 60_000 }, () => {
		const r = analyze([file, '--json', '--full-scale-volts', '10', '--load', '8']);
		expect(r.stderr).toBe('');
		expect(r.status).toBe(0);
		const doc = JSON.parse(r.stdout) as { file: string; sampleRateHz: number; channels: CliChannel[] };
		expect(doc.sampleRateHz).toBe(44100);
		expect(doc.file).toContain('two-tone-24bit.wav');
		const truth = [
			{ f: 1234.5, order: 2 },
			{ f: 440, order: 3 }
		];
		const vrms = (0.25 * 10) / Math.SQRT2; // sine rms = peak/√2; full scale 10 V peak
		const thd = 0.01; // −40 dBc (IEC 60050: THD relative to the fundamental)
		const thdn = thd / Math.sqrt(1 + thd * thd); // relative to the total in-band rms (REFERENCES §6)
		for (const [i, t] of truth.entries()) {
			const ch = doc.channels[i];
			expect(ch.channel).toBe(i);
			expect(Math.abs(ch.frequencyHz - t.f)).toBeLessThan(0.05);
			expect(Math.abs(ch.levelDbv - 20 * Math.log10(vrms))).toBeLessThan(0.05);
			expect(Math.abs(ch.levelDbu - 20 * Math.log10(vrms / Math.sqrt(0.6)))).toBeLessThan(0.05); // 0 dBu = √0.6 V
			expect(ch.powerW).toBeCloseTo((vrms * vrms) / 8, 2); // P = V²/R
			expect(Math.abs(ch.thdDb - 20 * Math.log10(thd))).toBeLessThan(0.5);
			expect(Math.abs(ch.thdnDb - 20 * Math.log10(thdn))).toBeLessThan(0.5);
			expect(Math.abs(ch.thdPercent - 1)).toBeLessThan(0.06);
			const h = ch.harmonics.find((x) => x.order === t.order);
			expect(Math.abs((h?.levelDbc ?? 0) + 40)).toBeLessThan(0.5);
			expect(Math.abs((h?.frequencyHz ?? 0) - t.order * t.f)).toBeLessThan(0.1);
			// 24-bit quantisation alone: noise far below the −40 dB distortion.
			expect(ch.snrDb).toBeGreaterThan(120);
		}
	});

	it('--channel, --band, --weighting and --fft are honoured', { timeout: 60_000 }, () => {
		const r = analyze([
			file,
			'--json',
			'--channel',
			'1',
			'--band',
			'22-22k',
			'--weighting',
			'a',
			'--fft',
			'16384',
			'--window',
			'flat-top'
		]);
		expect(r.status).toBe(0);
		const doc = JSON.parse(r.stdout) as { channels: CliChannel[]; conditions: Record<string, unknown> };
		expect(doc.channels).toHaveLength(1);
		expect(doc.channels[0].channel).toBe(1);
		expect(Math.abs(doc.channels[0].frequencyHz - 440)).toBeLessThan(0.05);
		expect(doc.conditions).toMatchObject({
			bandHz: [22, 22000],
			weighting: 'a',
			fftSize: 16384,
			window: 'flat-top'
		});
	});

	it('`npm run --silent analyze -- FILE --json` prints only the JSON document', { timeout: 60_000 }, () => {
		const r = run('npm', ['run', '--silent', 'analyze', '--', file, '--json']);
		expect(r.status).toBe(0);
		expect(() => JSON.parse(r.stdout)).not.toThrow();
		expect(r.stdout.trimStart().startsWith('{')).toBe(true);
	});

	it('prints a readable table without --json', { timeout: 60_000 }, () => {
		const r = analyze([file]);
		expect(r.status).toBe(0);
		expect(r.stdout).toMatch(/THD\+N\s+dB/);
		expect(r.stdout).toMatch(/1234\.500/);
		// Both channels are driven (balance ≈ 0 dB): no crosstalk figure, and never "ch undefined".
		expect(r.stdout).not.toMatch(/undefined/);
		expect(r.stdout).toMatch(/Crosstalk\s+—/);
	});

	it(
		'--stimulus none --json: hum + hiss reads its total in-band rms; tone figures are null (REFERENCES.md §5)',
		{ timeout: 60_000 },
		() => {
			// 250 µV at 100 Hz, 60 µV at 200 Hz, 15 µV white noise (LCG uniform, rms = half-width/√3), 48 kHz.
			const rate = 48000;
			const n = 6 * rate;
			const fs = 2e-3;
			const x = new Float32Array(n);
			let seed = 1;
			const halfWidth = 15e-6 * Math.sqrt(3);
			let s2 = 0;
			for (let i = 0; i < n; i++) {
				seed = (Math.imul(seed, 1664525) + 1013904223) >>> 0;
				const w = (seed / 4294967296 - 0.5) * 2 * halfWidth;
				s2 += w * w;
				const t = i / rate;
				x[i] =
					(250e-6 * Math.SQRT2 * Math.sin(2 * Math.PI * 100 * t) +
						60e-6 * Math.SQRT2 * Math.sin(2 * Math.PI * 200 * t + 1) +
						w) /
					fs;
			}
			const hum = join(dir, 'hum-hiss.wav');
			writeFileSync(hum, encodeWav([x], rate));
			const r = analyze([
				hum,
				'--json',
				'--stimulus',
				'none',
				'--mains',
				'50',
				'--full-scale-volts',
				String(fs)
			]);
			expect(r.stderr).toBe('');
			expect(r.status).toBe(0);
			const doc = JSON.parse(r.stdout) as {
				conditions: { stimulus: string; mainsHz: number };
				channels: (Record<string, unknown> & { noiseVrms: number; noiseAVrms: number })[];
			};
			const ch = doc.channels[0];
			// Uncorrelated parts add in power; white noise over 20 Hz–20 kHz of 0–24 kHz.
			const white2 = (s2 / n) * (19980 / 24000);
			const expected = Math.sqrt(250e-6 ** 2 + 60e-6 ** 2 + white2);
			expect(Math.abs(20 * Math.log10(ch.noiseVrms / expected))).toBeLessThan(0.1);
			expect(ch.noiseAVrms).toBeLessThan(ch.noiseVrms);
			expect(ch.thdPercent).toBeNull();
			expect(ch.thdnPercent).toBeNull();
			expect(ch.frequencyHz).toBeNull();
			expect(doc.conditions).toMatchObject({ stimulus: 'none', mainsHz: 50 });
			const table = analyze([hum, '--stimulus', 'none', '--full-scale-volts', String(fs)]);
			expect(table.stdout).toMatch(/Mains ×2\s+V rms\s+0\.000250/);
			expect(table.stdout).toMatch(/no signal — no stimulus/);
		}
	);

	it(
		'errors are one line on stderr with exit code 1 or 2, never a stack trace',
		{ timeout: 120_000 },
		async () => {
			const notWav = join(dir, 'notes.txt');
			writeFileSync(notWav, 'not audio\n');
			const cases: [string[], number, RegExp][] = [
				[[notWav], 1, /not a WAV file/],
				[[join(dir, 'missing.wav')], 1, /no such file/],
				[[file, '--fft', '1000'], 2, /power of two/],
				[[file, '--band', '20000-20'], 2, /--band/],
				[[file, '--weighting', 'c'], 2, /--weighting/],
				[[file, '--channel', '5'], 2, /does not exist/],
				[[file, '--bogus'], 2, /bogus/],
				[[file, '--stimulus', 'pink'], 2, /--stimulus must be one of tone, none, smpte, twin-tone/],
				[[file, '--mains', '55'], 2, /--mains must be 50 or 60/],
				[[], 2, /no WAV file/]
			];
			const results = await Promise.all(cases.map(([args]) => analyzeAsync(args)));
			for (const [i, [args, code, re]] of cases.entries()) {
				const r = results[i];
				expect(r.status, args.join(' ')).toBe(code);
				expect(r.stdout).toBe('');
				expect(r.stderr).toMatch(re);
				expect(r.stderr.trim().split('\n')).toHaveLength(1);
				expect(r.stderr).not.toMatch(/\n\s+at /);
			}
		}
	);
});
