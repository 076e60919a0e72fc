// The snapshot service on an in-memory database: WAV files written here byte by byte (not with
// the measurement core's own encoder) go in, and the stored figures must match the analytic truth.
import { beforeEach, describe, expect, it } from 'vitest';
import { sql } from 'drizzle-orm';
import { openDb, type Db } from './db/open';
import * as table from './db/schema';
import {
	createSnapshot,
	getSnapshot,
	getSnapshotAudio,
	listSnapshots,
	STEADINESS_MAX_SECONDS
} from './snapshots';
import { STEADINESS_MAX_FRAMES } from './snapshot-analysis';
import { createLimitProfile } from './limit-profiles';
import { DomainError } from './errors';

/** A 24-bit integer PCM WAV, little-endian, written by hand (independent of src/lib/dsp/wav.ts). */
function wav24(channels: Float64Array[], rate: number): Uint8Array {
	const n = channels[0].length;
	const ch = channels.length;
	const dataBytes = n * ch * 3;
	const buf = new Uint8Array(44 + dataBytes);
	const dv = new DataView(buf.buffer);
	const ascii = (at: number, s: string) => [...s].forEach((c, i) => (buf[at + i] = c.charCodeAt(0)));
	ascii(0, 'RIFF');
	dv.setUint32(4, 36 + dataBytes, true);
	ascii(8, 'WAVE');
	ascii(12, 'fmt ');
	dv.setUint32(16, 16, true);
	dv.setUint16(20, 1, true); // PCM
	dv.setUint16(22, ch, true);
	dv.setUint32(24, rate, true);
	dv.setUint32(28, rate * ch * 3, true);
	dv.setUint16(32, ch * 3, true);
	dv.setUint16(34, 24, true);
	ascii(36, 'data');
	dv.setUint32(40, dataBytes, true);
	let at = 44;
	for (let i = 0; i < n; i++)
		for (let c = 0; c < ch; c++) {
			let v = Math.round(channels[c][i] * 8388608);
			v = Math.max(-8388608, Math.min(8388607, v));
			buf[at++] = v & 0xff;
			buf[at++] = (v >> 8) & 0xff;
			buf[at++] = (v >> 16) & 0xff;
		}
	return buf;
}

const RATE = 48_000;
const N = 72_000; // 1.5 s

/** Fundamental of peak amplitude `a` at `f` Hz plus harmonics given as [order, amplitude relative to the fundamental]. */
function tone(
	a: number,
	f: number,
	harmonics: [number, number][] = [],
	n = N,
	levelAt?: (i: number) => number
): Float64Array {
	const out = new Float64Array(n);
	for (let i = 0; i < n; i++) {
		const t = i / RATE;
		let v = Math.sin(2 * Math.PI * f * t);
		for (const [order, rel] of harmonics) v += rel * Math.sin(2 * Math.PI * order * f * t + 0.3 * order);
		out[i] = a * (levelAt ? levelAt(i) : 1) * v;
	}
	return out;
}

let db: Db;
let jobId: number;
beforeEach(() => {
	db = openDb(':memory:');
	db.insert(table.users)
		.values({ id: 'u1', email: 't@example.com', name: 'Tess Bench', role: 'technician', passwordHash: 'x' })
		.run();
	const c = db.insert(table.customers).values({ name: 'C' }).returning().get();
	jobId = db
		.insert(table.jobs)
		.values({
			customerId: c.id,
			category: 'integrated-amplifier',
			make: 'Corvane',
			model: 'IA-1',
			complaint: 'distorts'
		})
		.returning()
		.get().id;
});

const count = (t: 'snapshots' | 'snapshot_audio_blobs') =>
	(db.get(sql.raw(`select count(*) as n from ${t}`)) as { n: number }).n;

describe('createSnapshot', () => {
	// 2nd harmonic at −60 dBc and 3rd at −66 dBc: THD = √(0.001² + 0.000501²) (REFERENCES.md §6, THD_F = √ΣVn²/V1).
	const h2 = 10 ** (-60 / 20);
	const h3 = 10 ** (-66 / 20);
	const thdTrue = Math.sqrt(h2 * h2 + h3 * h3);

	it('stores the server’s own analysis of the WAV, matching the analytic truth', async () => {
		const left = tone(0.5, 1000, [
			[2, h2],
			[3, h3]
		]);
		const right = tone(0.25, 1000);
		const res = createSnapshot(db, {
			jobId,
			userId: 'u1',
			wav: wav24([left, right], RATE),
			meta: JSON.stringify({
				label: 'before recap',
				stage: 'before',
				fullScaleVolts: 10,
				loadOhms: 8,
				referenceVrms: 0.5,
				analysis: { fftSize: 16384 }
			})
		});
		expect(res.verdict).toBe('none');
		expect(res.checks).toEqual([]);
		const [l, r] = res.results.channels;
		// 0.5 × 10 V peak = 5 V peak = 5/√2 V rms
		const vrms = 5 / Math.SQRT2;
		expect(l.levelVrms).toBeCloseTo(vrms, 4);
		expect(l.levelDbv).toBeCloseTo(20 * Math.log10(vrms), 3);
		// dBu = 20·lg(V/0.774597) (REFERENCES.md §5: 0 dBu = √0.6 V)
		expect(l.levelDbu).toBeCloseTo(20 * Math.log10(vrms / Math.sqrt(0.6)), 3);
		// P = V²/R (REFERENCES.md §5)
		expect(l.powerW).toBeCloseTo((vrms * vrms) / 8, 3);
		expect(l.gainDb).toBeCloseTo(20 * Math.log10(vrms / 0.5), 3);
		expect(l.frequencyHz).toBeCloseTo(1000, 2);
		expect(l.thdPercent).toBeCloseTo(thdTrue * 100, 3);
		// THD+N relative to the total in-band rms: THD/√(1+THD²) when the residual is only harmonics (REFERENCES.md §6).
		expect(l.thdnPercent).toBeCloseTo((thdTrue / Math.sqrt(1 + thdTrue * thdTrue)) * 100, 3);
		expect(l.harmonics.find((h) => h.order === 2)?.levelDbc).toBeCloseTo(-60, 1);
		expect(l.harmonics.find((h) => h.order === 3)?.levelDbc).toBeCloseTo(-66, 1);
		expect(r.levelVrms).toBeCloseTo(vrms / 2, 4);
		expect(r.thdPercent).toBeLessThan(0.001);
		// Balance of a 2:1 pair: 20·lg 2 = 6.0206 dB.
		expect(res.results.balanceDb).toBeCloseTo(6.0206, 3);
		expect(res.results.conditions.fftSize).toBe(16384);
		expect(res.results.conditions.loadOhms).toBe(8);
		// A steady tone: 14 frames across the capture, (almost) no spread.
		expect(res.results.steadiness[0].frames).toBe(14);
		expect(res.results.steadiness[0].levelSpreadDb).toBeLessThan(0.001);

		const stored = getSnapshot(db, res.id)!;
		expect(stored.results).toEqual(res.results);
		expect(stored.label).toBe('before recap');
		expect(stored.createdByName).toBe('Tess Bench');
		expect(stored.sampleRateHz).toBe(RATE);
		expect(stored.channelCount).toBe(2);
		expect(stored.sampleCount).toBe(N);
		expect(stored.spectrum.channels).toHaveLength(2);
		// The compact spectrum's loudest point is the fundamental at its dBV level.
		const s = stored.spectrum.channels[0];
		const peak = s.levelDbv.indexOf(Math.max(...s.levelDbv));
		expect(s.frequencyHz[peak]).toBeCloseTo(1000, -1);
		expect(s.levelDbv[peak]).toBeCloseTo(20 * Math.log10(vrms), 0);
		expect(s.frequencyHz.length).toBeGreaterThan(500);
		expect(s.frequencyHz.length).toBeLessThanOrEqual(2000);
		const audio = (await getSnapshotAudio(db, res.id))!;
		expect(audio.wav.byteLength).toBe(44 + N * 2 * 3);
		expect(audio.sha256).toMatch(/^[0-9a-f]{64}$/);
		expect(listSnapshots(db, jobId).map((x) => [x.id, x.verdict, x.stage])).toEqual([
			[res.id, 'none', 'before']
		]);
	});

	it('evaluates the chosen profile with the profile’s conditions, per channel', () => {
		const p = createLimitProfile(
			db,
			{
				name: 'THD 0.1 %',
				conditions: { bandLowHz: 20, bandHighHz: 20_000, weighting: 'none' },
				limits: [
					{ metric: 'thdPercent', channel: 'each', op: 'le', value: 0.1, unit: '%' },
					{ metric: 'balanceDb', channel: 'each', op: 'le', value: 6.1, unit: 'dB' }
				]
			},
			'u1'
		);
		const res = createSnapshot(db, {
			jobId,
			userId: 'u1',
			wav: wav24(
				[
					tone(0.5, 1000, [
						[2, h2],
						[3, h3]
					]),
					tone(0.25, 1000)
				],
				RATE
			),
			meta: { label: 'x', stage: 'after', profileId: p.id, analysis: { fftSize: 16384, bandHz: [400, 500] } }
		});
		// The profile's 20 Hz–20 kHz band won over the bench's 400–500 Hz (which would hold no harmonics).
		expect(res.results.conditions.bandHz).toEqual([20, 20000]);
		expect(res.checks.map((c) => [c.metric, c.channel, c.pass])).toEqual([
			['thdPercent', 'left', false],
			['thdPercent', 'right', true],
			['balanceDb', null, true]
		]);
		expect(res.checks[0].measured).toBeCloseTo(thdTrue * 100, 3);
		expect(res.verdict).toBe('fail');
		const stored = getSnapshot(db, res.id)!;
		expect(stored.verdict).toBe('fail');
		expect((stored.profile as { name: string }).name).toBe('THD 0.1 %');
	});

	it('judges DC offset only when the bench declares a DC-coupled input', () => {
		// 0.1 full-scale DC under a 1 kHz tone, full scale 1 V peak: DC offset 100 mV (a mean is the DC term).
		const withDc = (x: Float64Array) => x.map((v) => v + 0.1);
		const p = createLimitProfile(
			db,
			{
				name: 'Offset 50 mV',
				conditions: { bandLowHz: 20, bandHighHz: 20_000, weighting: 'none' },
				// A ±50 mV offset limit is common practice, no source.
				limits: [{ metric: 'dcOffsetV', channel: 'each', op: 'le', value: 50, unit: 'mV' }]
			},
			'u1'
		);
		const upload = (dcCoupled: boolean | undefined) =>
			createSnapshot(db, {
				jobId,
				userId: 'u1',
				wav: wav24([withDc(tone(0.5, 1000)), tone(0.5, 1000)], RATE),
				meta: {
					label: 'offset',
					stage: 'after',
					profileId: p.id,
					...(dcCoupled === undefined ? {} : { dcCoupled })
				}
			});
		const coupled = upload(true);
		expect(coupled.checks.map((c) => [c.channel, c.pass])).toEqual([
			['left', false],
			['right', true]
		]);
		expect(coupled.checks[0].measured).toBeCloseTo(100, 0);
		expect(coupled.results.conditions.dcCoupled).toBe(true);
		// An AC-coupled input (or a bench that does not say): the offset is not a reading, so not judged.
		for (const blocked of [upload(false), upload(undefined)]) {
			expect(blocked.checks.every((c) => c.measured === null)).toBe(true);
			expect(blocked.results.conditions.dcCoupled).toBe(false);
		}
	});

	it('measures under the bench’s stated load and fails power limits whose assumed load differs (a 4.5 W into 8 Ω profile)', () => {
		const p = createLimitProfile(
			db,
			{
				name: 'Power 4.5 W into 8 Ω',
				conditions: {
					bandLowHz: 20,
					bandHighHz: 20_000,
					weighting: 'none',
					loadOhms: 8,
					generatorLevelVrms: 0.32
				},
				limits: [{ metric: 'powerW', channel: 'each', op: 'ge', value: 4.5, unit: 'W' }]
			},
			'u1'
		);
		// 2.3 W into 8 Ω: V rms = √(2.3 × 8) (P = V²/R, REFERENCES.md §5); into 4 Ω it would read 4.6 W ≥ 4.5 W.
		const vrms = Math.sqrt(2.3 * 8);
		const peak = (vrms * Math.SQRT2) / 10; // 10 V full scale
		const ch = () => tone(peak, 1000, [], N);
		const res = createSnapshot(db, {
			jobId,
			userId: 'u1',
			wav: wav24([ch(), ch()], RATE),
			meta: {
				label: 'power',
				stage: 'after',
				profileId: p.id,
				fullScaleVolts: 10,
				loadOhms: 4,
				referenceVrms: 1,
				analysis: { fftSize: 16384, bandHz: [400, 2000], weighting: 'a' }
			}
		});
		const c = res.results.conditions;
		// Band and weighting are the profile's; load and generator level are the bench's stated facts.
		expect(c.loadOhms).toBe(4);
		expect(c.referenceVrms).toBe(1);
		expect(c.bandHz).toEqual([20, 20000]);
		expect(c.weighting).toBe('none');
		expect(c.sources).toEqual({
			bandHz: 'profile',
			weighting: 'profile',
			loadOhms: 'bench',
			referenceVrms: 'bench'
		});
		expect(res.results.channels[0].powerW).toBeCloseTo(4.6, 3); // V²/R with R = 4 Ω (REFERENCES.md §5)
		// 4.6 W would clear the 4.5 W limit, but the profile assumes 8 Ω: the power checks fail, with the reason.
		const power = res.checks.filter((x) => x.metric === 'powerW');
		expect(power.map((x) => [x.channel, x.pass])).toEqual([
			['left', false],
			['right', false]
		]);
		expect(power[0].note).toBe('measured into 4 Ω; the profile assumes 8 Ω');
		expect(res.verdict).toBe('fail');
		expect(getSnapshot(db, res.id)!.loadOhms).toBe(4);

		// Stated honestly (8 Ω, the profile's 0.32 V), the same 2.3 W fails on its own figure.
		const honest = createSnapshot(db, {
			jobId,
			userId: 'u1',
			wav: wav24([ch(), ch()], RATE),
			meta: {
				label: 'power',
				stage: 'after',
				profileId: p.id,
				fullScaleVolts: 10,
				loadOhms: 8,
				referenceVrms: 0.32
			}
		});
		expect(honest.results.channels[0].powerW).toBeCloseTo(2.3, 3); // V²/R with R = 8 Ω
		expect(honest.results.channels[0].gainDb).toBeCloseTo(20 * Math.log10(vrms / 0.32), 3);
		const honestPower = honest.checks.filter((x) => x.metric === 'powerW');
		expect(honestPower.every((x) => !x.pass && x.note === undefined)).toBe(true);
		// Silent bench: the profile's conditions are used.
		const silent = createSnapshot(db, {
			jobId,
			userId: 'u1',
			wav: wav24([ch(), ch()], RATE),
			meta: { label: 'power', stage: 'after', profileId: p.id, fullScaleVolts: 10 }
		});
		expect(silent.results.conditions.loadOhms).toBe(8);
		expect(silent.results.conditions.sources.loadOhms).toBe('profile');
		expect(silent.results.channels[0].powerW).toBeCloseTo(2.3, 3);
	});

	it('uses the bench’s conditions where the profile is silent, and says so', () => {
		const p = createLimitProfile(
			db,
			{
				name: 'THD only',
				conditions: { bandLowHz: 20, bandHighHz: 20_000, weighting: 'none' },
				limits: [{ metric: 'powerW', channel: 'each', op: 'ge', value: 1, unit: 'W' }]
			},
			'u1'
		);
		const res = createSnapshot(db, {
			jobId,
			userId: 'u1',
			wav: wav24([tone(0.5, 1000)], RATE),
			meta: {
				label: 'x',
				stage: 'after',
				profileId: p.id,
				fullScaleVolts: 10,
				loadOhms: 4,
				analysis: { fftSize: 16384 }
			}
		});
		expect(res.results.conditions.loadOhms).toBe(4);
		expect(res.results.conditions.sources).toEqual({
			bandHz: 'profile',
			weighting: 'profile',
			loadOhms: 'bench',
			referenceVrms: 'none'
		});
		// (5/√2)² / 4 = 3.125 W (P = V²/R, REFERENCES.md §5)
		expect(res.results.channels[0].powerW).toBeCloseTo(3.125, 3);
		expect(res.verdict).toBe('pass');
		const free = createSnapshot(db, {
			jobId,
			userId: 'u1',
			wav: wav24([tone(0.5, 1000)], RATE),
			meta: { label: 'y', stage: 'after', analysis: { fftSize: 16384 } }
		});
		expect(free.results.conditions.sources).toEqual({
			bandHz: 'default',
			weighting: 'default',
			loadOhms: 'none',
			referenceVrms: 'none'
		});
	});

	it('reads steadiness from the newest 6 s only: a step 8 s before the end is outside the window', () => {
		const n = 12 * RATE;
		const step = 10 ** (1 / 20);
		// +1 dB from 4 s on; the last 6 s (6 s … 12 s) are steady.
		const left = tone(0.3, 1000, [], n, (i) => (i < 4 * RATE ? 1 : step));
		const res = createSnapshot(db, {
			jobId,
			userId: 'u1',
			wav: wav24([left], RATE),
			meta: { label: 'long', stage: 'other', analysis: { fftSize: 16384 } }
		});
		const st = res.results.steadiness[0];
		expect(STEADINESS_MAX_SECONDS).toBe(6);
		expect(st.durationS).toBeCloseTo(6, 6);
		// 6 s = 288 000 samples; frames of 16 384 every 4 096: ⌊(288 000 − 16 384)/4 096⌋ + 1 = 67.
		expect(st.frames).toBe(67);
		expect(st.levelSpreadDb).toBeLessThan(0.01);
		// The stored capture and its final-frame analysis are untouched by the cap.
		expect(res.results.capturedSamples).toBe(n);
		expect(res.results.channels[0].levelDbv).toBeCloseTo(20 * Math.log10((0.3 * step) / Math.SQRT2), 3);
	});

	it('at a high rate steadiness spreads its frames over the same 6 s, within the frame budget', () => {
		// 192 kHz, 7 s, 4k FFT: every fftSize/4 would be ⌊(6·192 000 − 4 096)/1 024⌋ + 1 = 1 122 frames.
		const rate = 192_000;
		const n = 7 * rate;
		const x = new Float64Array(n);
		for (let i = 0; i < n; i++) x[i] = 0.3 * Math.sin((2 * Math.PI * ((1000 * i) % rate)) / rate);
		const res = createSnapshot(db, {
			jobId,
			userId: 'u1',
			wav: wav24([x], rate),
			meta: { label: 'fast', stage: 'other', analysis: { fftSize: 4096 } }
		});
		const st = res.results.steadiness[0];
		expect(st.frames).toBe(STEADINESS_MAX_FRAMES);
		expect(st.durationS).toBeCloseTo(6, 6);
		expect(st.levelSpreadDb).toBeLessThan(0.01);
		// Plain physics: rms of a sine = peak/√2.
		expect(res.results.channels[0].levelVrms).toBeCloseTo(0.3 / Math.SQRT2, 4);
		expect(res.results.capturedSamples).toBe(n);
	});

	it('refuses a NaN sample even in older audio the analysis does not read', () => {
		// 32-bit float WAV, 10 s at 48 kHz, written by hand; one NaN in its first second.
		const n = 10 * RATE;
		const bytes = new Uint8Array(44 + n * 4);
		const dv = new DataView(bytes.buffer);
		const ascii = (at: number, t: string) => [...t].forEach((c, i) => (bytes[at + i] = c.charCodeAt(0)));
		ascii(0, 'RIFF');
		dv.setUint32(4, 36 + n * 4, true);
		ascii(8, 'WAVE');
		ascii(12, 'fmt ');
		dv.setUint32(16, 16, true);
		dv.setUint16(20, 3, true); // IEEE float
		dv.setUint16(22, 1, true);
		dv.setUint32(24, RATE, true);
		dv.setUint32(28, RATE * 4, true);
		dv.setUint16(32, 4, true);
		dv.setUint16(34, 32, true);
		ascii(36, 'data');
		dv.setUint32(40, n * 4, true);
		for (let i = 0; i < n; i++)
			dv.setFloat32(44 + 4 * i, 0.3 * Math.sin((2 * Math.PI * 1000 * i) / RATE), true);
		dv.setFloat32(44 + 4 * 1000, NaN, true);
		let refusal: unknown;
		try {
			createSnapshot(db, { jobId, userId: 'u1', wav: bytes, meta: { label: 'nan', stage: 'other' } });
		} catch (e) {
			refusal = e;
		}
		expect(refusal).toBeInstanceOf(DomainError);
		expect((refusal as DomainError).message).toBe('samples: the WAV file contains NaN or infinite samples');
		expect(count('snapshots')).toBe(0);
	});

	it('a signed-off job takes no new snapshot (409), stores nothing', () => {
		db.update(table.jobs)
			.set({ status: 'approved' })
			.where(sql`id = ${jobId}`)
			.run();
		let refusal: unknown;
		try {
			createSnapshot(db, {
				jobId,
				userId: 'u1',
				wav: wav24([tone(0.5, 1000)], RATE),
				meta: { label: 'late', stage: 'after' }
			});
		} catch (e) {
			refusal = e;
		}
		expect((refusal as DomainError).status).toBe(409);
		expect(count('snapshots')).toBe(0);
	});

	it('measures steadiness across the capture: a 1 dB level step shows as ≈ 1 dB spread', () => {
		const step = 10 ** (1 / 20);
		const left = tone(0.3, 1000, [], N, (i) => (i < N / 2 ? 1 : step));
		const res = createSnapshot(db, {
			jobId,
			userId: 'u1',
			wav: wav24([left], RATE),
			meta: { label: 'pot', stage: 'other', analysis: { fftSize: 8192 } }
		});
		const st = res.results.steadiness[0];
		expect(st.levelSpreadDb).toBeGreaterThan(0.95);
		expect(st.levelSpreadDb).toBeLessThan(1.01);
		// A mono capture: no balance.
		expect(res.results.balanceDb).toBeUndefined();
	});

	it('refuses bad uploads, naming which part, and stores nothing', () => {
		const good = wav24([tone(0.5, 1000)], RATE);
		const meta = { label: 'x', stage: 'before' };
		const cases: [string, () => unknown, string, RegExp][] = [
			[
				'not a WAV',
				() =>
					createSnapshot(db, {
						jobId,
						userId: 'u1',
						wav: new TextEncoder().encode('hello, not audio'),
						meta
					}),
				'samples',
				/not a WAV/
			],
			[
				'truncated',
				() => createSnapshot(db, { jobId, userId: 'u1', wav: good.subarray(0, 30), meta }),
				'samples',
				/WAV/
			],
			[
				'too short',
				() =>
					createSnapshot(db, { jobId, userId: 'u1', wav: wav24([tone(0.5, 1000, [], 1000)], RATE), meta }),
				'samples',
				/at least 4096/
			],
			[
				'meta not JSON',
				() => createSnapshot(db, { jobId, userId: 'u1', wav: good, meta: '{label' }),
				'meta',
				/not valid JSON/
			],
			[
				'bad stage',
				() => createSnapshot(db, { jobId, userId: 'u1', wav: good, meta: { label: 'x', stage: 'middle' } }),
				'meta',
				/invalid/
			],
			[
				'unknown key',
				() => createSnapshot(db, { jobId, userId: 'u1', wav: good, meta: { ...meta, verdict: 'pass' } }),
				'meta',
				/invalid/
			],
			[
				'unknown profile',
				() => createSnapshot(db, { jobId, userId: 'u1', wav: good, meta: { ...meta, profileId: 999 } }),
				'meta.profileId',
				/no limit profile with id 999/
			]
		];
		for (const [name, run, field, msg] of cases) {
			let err: unknown;
			try {
				run();
			} catch (e) {
				err = e;
			}
			expect(err, name).toBeInstanceOf(DomainError);
			expect((err as DomainError).status, name).toBe(400);
			expect((err as DomainError).issues?.[0].path, name).toMatch(new RegExp(`^${field}`));
			expect((err as DomainError).message, name).toMatch(msg);
		}
		expect(count('snapshots')).toBe(0);
		expect(count('snapshot_audio_blobs')).toBe(0);
	});

	it('is immutable: the database refuses UPDATE and DELETE of results and audio', () => {
		const res = createSnapshot(db, {
			jobId,
			userId: 'u1',
			wav: wav24([tone(0.5, 1000)], RATE),
			meta: { label: 'x', stage: 'before' }
		});
		const c = db.$client;
		expect(() => c.prepare(`update snapshots set verdict = 'pass' where id = ?`).run(res.id)).toThrow(
			/immutable/
		);
		expect(() => c.prepare(`update snapshots set results = '{}' where id = ?`).run(res.id)).toThrow(
			/immutable/
		);
		expect(() => c.prepare(`delete from snapshots where id = ?`).run(res.id)).toThrow(/immutable/);
		expect(() =>
			c.prepare(`update snapshot_audio_blobs set sha256 = 'x' where snapshot_id = ?`).run(res.id)
		).toThrow(/immutable/);
		expect(() => c.prepare(`delete from snapshot_audio_blobs where snapshot_id = ?`).run(res.id)).toThrow(
			/immutable/
		);
		expect(getSnapshot(db, res.id)?.verdict).toBe('none');
		expect(count('snapshot_audio_blobs')).toBe(1);
	});
});
