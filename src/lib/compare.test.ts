// The comparison arithmetic: changes in dB checked against the decibel's definition worked by hand
// (IEC 60027-3: a field quantity ratio in dB is 20·lg(b/a), a power ratio 10·lg(b/a)), % points as
// plain subtraction, the better/worse direction of each metric, flipped limit checks and the
// conditions that differ, on snapshot shapes as the API stores them.
import { describe, expect, it } from 'vitest';
import {
	beforeAfterPair,
	changeOf,
	CHANNEL_FIGURES,
	channelFigure,
	checkRows,
	conditionRows,
	differingConditions,
	figureRows,
	flippedChecks,
	formatChange,
	MAX_COMPARE,
	parseSelection,
	stimulusOf,
	type ComparableSnapshot
} from './compare';

const def = (key: string) => CHANNEL_FIGURES.find((f) => f.key === key)!;

function channel(over: Record<string, unknown> = {}) {
	return {
		channel: 0,
		frequencyHz: 1000.02,
		levelVrms: 2.0,
		levelDbv: 20 * Math.log10(2),
		levelDbu: 20 * Math.log10(2 / 0.7746),
		levelDbfs: -3,
		powerW: 0.5,
		thdPercent: 0.5,
		thdDb: 20 * Math.log10(0.005),
		thdnPercent: 0.52,
		thdnDb: 20 * Math.log10(0.0052),
		noiseVrms: 100e-6,
		noiseDbv: -80,
		snrDb: 86,
		noiseWeightedVrms: 60e-6,
		snrWeightedDb: 90.5,
		sinadDb: 45.7,
		enob: 7.3,
		totalVrms: 2.0,
		dcVolts: 0.012,
		harmonics: [
			{ order: 2, frequencyHz: 2000, levelDbc: -60, levelVrms: 0.002 },
			{ order: 3, frequencyHz: 3000, levelDbc: -46.4, levelVrms: 0.0096 }
		],
		...over
	};
}

function snap(id: number, over: Partial<ComparableSnapshot> & { chans?: Record<string, unknown>[] } = {}) {
	const { chans, ...rest } = over;
	return {
		id,
		label: `snap ${id}`,
		stage: 'before',
		createdAt: `2026-12-0${id}T10:00:00.000Z`,
		sampleRateHz: 48000,
		channelCount: 2,
		profileName: 'Line preamp output, 1 kHz',
		results: {
			conditions: {
				window: 'blackman-harris-7',
				fftSize: 65536,
				bandHz: [20, 20000],
				weighting: 'none',
				loadOhms: 8,
				referenceVrms: 0.5,
				fullScaleVolts: [2, 2]
			},
			channels: chans ?? [channel(), channel({ channel: 1 })],
			balanceDb: 0.3,
			steadiness: [
				{
					channel: 0,
					frames: 20,
					levelSpreadDb: 1.2,
					thdnSpreadDb: 6,
					levelStdDb: 0.4,
					thdnStdDb: 2,
					durationS: 6
				},
				{
					channel: 1,
					frames: 20,
					levelSpreadDb: 0.1,
					thdnSpreadDb: 1,
					levelStdDb: 0.03,
					thdnStdDb: 0.3,
					durationS: 6
				}
			]
		},
		checks: [],
		settings: { generator: { kind: 'sine', frequencyHz: 1000, levelVrms: 0.5 } },
		...rest
	} satisfies ComparableSnapshot;
}

describe('changeOf: dB and % points', () => {
	it('a voltage ratio is 20·lg(b/a) dB: noise halved is −6.02 dB and better', () => {
		const c = changeOf(def('noiseVrms'), 100e-6, 50e-6);
		// IEC 60027-3: 20·lg(0.5) = −6.0206 dB
		expect(c.value).toBeCloseTo(20 * Math.log10(0.5), 9);
		expect(c.value).toBeCloseTo(-6.0206, 4);
		expect(c.unit).toBe('dB');
		expect(c.verdict).toBe('better');
		expect(formatChange(c)).toBe('−6.02 dB');
	});

	it('a power ratio is 10·lg(b/a) dB: 4 W → 8 W is +3.01 dB and better (more power)', () => {
		const c = changeOf(def('powerW'), 4, 8);
		// IEC 60027-3: 10·lg(2) = 3.0103 dB
		expect(c.value).toBeCloseTo(3.0103, 4);
		expect(c.verdict).toBe('better');
		expect(formatChange(c)).toBe('+3.01 dB');
		expect(changeOf(def('powerW'), 8, 4).verdict).toBe('worse');
	});

	it('the same power change read as voltage into the same load agrees (P = V²/R)', () => {
		const r = 8;
		const va = 4;
		const vb = 5.657;
		const byVolts = changeOf(def('levelVrms'), va, vb).value!;
		const byPower = changeOf(def('powerW'), (va * va) / r, (vb * vb) / r).value!;
		expect(byVolts).toBeCloseTo(byPower, 9);
	});

	it('THD in % changes by % points (plain subtraction), lower is better', () => {
		const c = changeOf(def('thdPercent'), 0.5, 0.012);
		expect(c.value).toBeCloseTo(-0.488, 12);
		expect(c.unit).toBe('% points');
		expect(c.verdict).toBe('better');
		expect(formatChange(c)).toBe('−0.4880 % points');
		expect(changeOf(def('thdPercent'), 0.012, 0.5).verdict).toBe('worse');
	});

	it('figures already in dB change by subtraction: SNR 80 → 86 dB is +6 dB, better', () => {
		const c = changeOf(def('snrDb'), 80, 86);
		expect(c.value).toBe(6);
		expect(c.verdict).toBe('better');
		expect(changeOf(def('thdnDb'), -46, -80).verdict).toBe('better');
	});

	it('changes below 0.1 dB (or the same ratio in %) read as the same', () => {
		expect(changeOf(def('snrDb'), 86, 86.05).verdict).toBe('same');
		// 0.0500 → 0.0504 % is 20·lg(1.008) = 0.069 dB: same
		expect(changeOf(def('thdnPercent'), 0.05, 0.0504).verdict).toBe('same');
		// 0.0500 → 0.0510 % is 20·lg(1.02) = 0.172 dB: worse
		expect(changeOf(def('thdnPercent'), 0.05, 0.051).verdict).toBe('worse');
	});

	it('settings, not qualities, read as higher/lower without better/worse', () => {
		expect(changeOf(def('levelVrms'), 1, 2).verdict).toBe('higher');
		expect(changeOf(def('gainDb'), 20, 14).verdict).toBe('lower');
	});

	it('DC offset is better nearer zero, whatever its sign', () => {
		const c = changeOf(def('dcVolts'), 0.012, -0.003);
		expect(c.value).toBeCloseTo(-0.015, 12);
		expect(c.verdict).toBe('better');
		expect(formatChange(c)).toBe('−15.00 mV');
		expect(changeOf(def('dcVolts'), -0.003, 0.02).verdict).toBe('worse');
	});

	it('a missing side is not comparable, never a number', () => {
		expect(changeOf(def('powerW'), null, 5)).toEqual({ value: null, unit: 'dB', verdict: 'not comparable' });
		expect(changeOf(def('noiseVrms'), 0, 1e-6).verdict).toBe('not comparable');
		expect(formatChange(changeOf(def('snrDb'), 80, null))).toBe('—');
	});
});

describe('figures of stored snapshots', () => {
	it('reads null figures with the stored reason, and fixed reasons for a missing load', () => {
		const s = snap(1, {
			chans: [
				channel({ thdnPercent: null, signal: false, signalReason: 'no signal above the noise floor' }),
				channel({ channel: 1, powerW: undefined })
			]
		});
		expect(channelFigure(s, 0, 'thdnPercent')).toEqual({
			value: null,
			reason: 'no signal above the noise floor'
		});
		expect(channelFigure(s, 1, 'powerW')).toEqual({ value: null, reason: 'no load stated' });
		expect(channelFigure(s, 1, 'h3')).toEqual({ value: -46.4, reason: null });
		expect(channelFigure(s, 0, 'levelSpreadDb')).toEqual({ value: 1.2, reason: null });
		expect(channelFigure(s, 5, 'levelVrms').reason).toBe('channel not captured');
	});

	it('lines up every figure of two snapshots with the change against the first', () => {
		const before = snap(1);
		const after = snap(2, {
			stage: 'after',
			chans: [
				channel({ thdPercent: 0.01, thdnPercent: 0.012, noiseVrms: 50e-6, powerW: 1 }),
				channel({ channel: 1, thdPercent: 0.5 })
			]
		});
		const rows = figureRows([before, after]);
		const row = (id: string) => rows.find((r) => r.id === id)!;
		expect(row('ch0:thdPercent').values.map((v) => v.value)).toEqual([0.5, 0.01]);
		expect(row('ch0:thdPercent').changes[1]).toMatchObject({ unit: '% points', verdict: 'better' });
		expect(row('ch0:thdPercent').changes[1]!.value).toBeCloseTo(-0.49, 12);
		expect(row('ch0:noiseVrms').changes[1]!.value).toBeCloseTo(20 * Math.log10(0.5), 9);
		expect(row('ch0:powerW').changes[1]!.value).toBeCloseTo(10 * Math.log10(2), 9);
		expect(row('ch1:thdPercent').changes[1]!.verdict).toBe('same');
		expect(row('ch0:h2').scope).toBe('L');
		expect(row('stereo:balanceDb').values[0].value).toBe(0.3);
		// No crosstalk stored (both channels driven): the row is there, with the reason.
		expect(row('stereo:crosstalkDb').values[0]).toEqual({
			value: null,
			reason: 'both channels driven (measured with one channel driven)'
		});
		expect(rows.some((r) => r.id.startsWith('imd:'))).toBe(false);
	});

	it('shows a power change under another load but does not call it better', () => {
		const a = snap(1);
		const b = snap(2, { chans: [channel({ powerW: 2 }), channel({ channel: 1, powerW: 2 })] });
		(b.results as { conditions: Record<string, unknown> }).conditions.loadOhms = 4;
		const power = figureRows([a, b]).find((r) => r.id === 'ch0:powerW')!;
		// 10·lg(2 / 0.5) = 6.02 dB, but into 4 Ω instead of 8 Ω
		expect(power.changes[1]!.value).toBeCloseTo(10 * Math.log10(4), 9);
		expect(power.changes[1]!.verdict).toBe('not comparable');
		expect(power.changes[1]!.note).toBe('measured into another load');
		// Same load: judged as usual.
		const same = figureRows([a, snap(2, { chans: [channel({ powerW: 2 })] })]).find(
			(r) => r.id === 'ch0:powerW'
		)!;
		expect(same.changes[1]!.verdict).toBe('better');
	});

	it('adds IMD rows only where measured, per channel, with the core’s reason when it could not be', () => {
		const imd = (imdPercent: number) => ({
			method: 'smpte',
			imdPercent,
			imdDb: 20 * Math.log10(imdPercent / 100),
			d2Percent: 0.05,
			d3Percent: 0.06
		});
		const before = snap(1, {
			chans: [channel({ imd: null, imdError: 'FFT too short for the tone spacing' }), channel({ channel: 1 })]
		});
		const after = snap(2, { chans: [channel({ imd: imd(0.08) }), channel({ channel: 1, imd: imd(0.2) })] });
		const rows = figureRows([before, after]);
		const left = rows.find((r) => r.id === 'imd:smpte:ch0:imdPercent')!;
		expect(left.scope).toBe('L SMPTE');
		expect(left.values.map((v) => v.value)).toEqual([null, 0.08]);
		expect(left.values[0].reason).toBe('FFT too short for the tone spacing');
		expect(left.changes[1]!.verdict).toBe('not comparable');
		const right = rows.find((r) => r.id === 'imd:smpte:ch1:imdPercent')!;
		expect(right.values[0]).toEqual({ value: null, reason: 'not measured' });
		expect(rows.some((r) => r.id.startsWith('imd:') && r.id.includes('imdDb'))).toBe(true);
		// A later snapshot with IMD on both: 0.08 % → 0.2 % is +0.12 % points, worse.
		const rows2 = figureRows([after, snap(3, { chans: [channel({ imd: imd(0.2) })] })]);
		const c = rows2.find((r) => r.id === 'imd:smpte:ch0:imdPercent')!.changes[1]!;
		expect(c.value).toBeCloseTo(0.12, 12);
		expect(c.verdict).toBe('worse');
	});

	it('reads the analysis’s stimulus kind when no generator settings were stored', () => {
		const s = snap(1, { settings: {} });
		(s.results as { conditions: Record<string, unknown> }).conditions.stimulus = 'none';
		expect(stimulusOf(s)).toBe('none (residual noise and hum)');
	});

	it('leaves S/N rows out unless a snapshot has them', () => {
		expect(figureRows([snap(1), snap(2)]).some((r) => r.id === 'ch0:snDb')).toBe(false);
		const withSn = snap(2, { chans: [channel({ snDb: 95.5 })] });
		const row = figureRows([snap(1), withSn]).find((r) => r.id === 'ch0:snDb')!;
		expect(row.values.map((v) => v.value)).toEqual([null, 95.5]);
	});

	it('reads IMD stored once for the record (results.imd) as the left channel’s', () => {
		const withImd = snap(2);
		(withImd.results as Record<string, unknown>).imd = {
			method: 'smpte',
			imdPercent: 0.08,
			imdDb: 20 * Math.log10(0.0008),
			d2Percent: 0.05,
			d3Percent: 0.06
		};
		const rows = figureRows([snap(1), withImd]);
		const imd = rows.find((r) => r.id === 'imd:smpte:ch0:imdPercent')!;
		expect(imd.scope).toBe('L SMPTE');
		expect(imd.values.map((v) => v.value)).toEqual([null, 0.08]);
		expect(imd.values[0].reason).toBe('not measured');
		expect(imd.changes[1]!.verdict).toBe('not comparable');
	});
});

describe('limit checks that flipped', () => {
	const check = (metric: string, channel: string | null, pass: boolean, measured: number) => ({
		index: 0,
		metric,
		label: metric === 'thdnPercent' ? 'THD+N' : 'SNR',
		channel,
		op: metric === 'thdnPercent' ? 'le' : 'ge',
		value: metric === 'thdnPercent' ? 0.05 : 80,
		unit: metric === 'thdnPercent' ? '%' : 'dB',
		measured,
		pass
	});

	it('finds fail→pass and pass→fail by limit, and keeps steady ones out of the flipped list', () => {
		const a = snap(1, {
			checks: [
				check('thdnPercent', 'left', false, 0.52),
				check('snrDb', 'left', true, 86),
				check('snrDb', 'right', true, 85)
			]
		});
		const b = snap(2, {
			checks: [
				check('thdnPercent', 'left', true, 0.012),
				check('snrDb', 'left', false, 78),
				check('snrDb', 'right', true, 85)
			]
		});
		const rows = checkRows([a, b]);
		expect(rows.map((r) => r.text)).toEqual([
			'THD+N (left) ≤ 0.05 %',
			'SNR (left) ≥ 80 dB',
			'SNR (right) ≥ 80 dB'
		]);
		expect(rows.map((r) => r.flips[1])).toEqual(['fail→pass', 'pass→fail', 'still passes']);
		expect(flippedChecks(rows).map((r) => r.text)).toEqual(['THD+N (left) ≤ 0.05 %', 'SNR (left) ≥ 80 dB']);
	});

	it('a limit only one snapshot was checked against is "not checked", not a flip', () => {
		const rows = checkRows([
			snap(1, { checks: [] }),
			snap(2, { checks: [check('snrDb', 'left', true, 86)] })
		]);
		expect(rows[0].flips[1]).toBe('not checked');
		expect(flippedChecks(rows)).toEqual([]);
	});
});

describe('conditions', () => {
	it('flags load, level, band, weighting and stimulus when they differ, and nothing when they match', () => {
		const a = snap(1);
		expect(differingConditions([a, snap(2)])).toEqual([]);
		const b = snap(2, {
			settings: { generator: { kind: 'twin-tone', f1Hz: 19000, f2Hz: 20000, levelVrms: 0.5 } },
			sampleRateHz: 96000
		});
		const r = b.results as { conditions: Record<string, unknown> };
		r.conditions = {
			...r.conditions,
			loadOhms: 4,
			referenceVrms: 1,
			bandHz: [20, 80000],
			weighting: 'a',
			window: 'hann'
		};
		expect(differingConditions([a, b])).toEqual([
			'Stimulus',
			'Load',
			'Generator level',
			'Band',
			'Weighting',
			'Window',
			'Sample rate'
		]);
		const rows = conditionRows([a, b]);
		expect(rows.find((x) => x.def.key === 'load')!.values).toEqual(['8 Ω', '4 Ω']);
		expect(rows.find((x) => x.def.key === 'band')!.values).toEqual(['20 Hz–20 kHz', '20 Hz–80 kHz']);
	});

	it('describes the stored stimulus', () => {
		expect(stimulusOf(snap(1))).toBe('sine 1 kHz, 0.5 V rms');
		expect(
			stimulusOf(
				snap(1, {
					settings: { generator: { kind: 'smpte', lowHz: 60, highHz: 7000, ratio: 4, levelVrms: 1 } }
				})
			)
		).toBe('SMPTE 60 Hz + 7 kHz 4:1, 1 V rms');
		expect(stimulusOf(snap(1, { settings: null }))).toBeNull();
	});
});

describe('selection', () => {
	it('parses ids, drops duplicates and refuses anything else', () => {
		expect(parseSelection('12,15,12')).toEqual([12, 15]);
		expect(parseSelection('')).toEqual([]);
		expect(parseSelection('12,x')).toBeNull();
		expect(parseSelection('0')).toBeNull();
		expect(parseSelection('-3')).toBeNull();
		expect(MAX_COMPARE).toBe(6);
	});

	it('picks the newest before and the newest after', () => {
		const list = [
			{ id: 9, stage: 'after', createdAt: '2026-12-03T10:00:00Z' },
			{ id: 8, stage: 'after', createdAt: '2026-12-02T10:00:00Z' },
			{ id: 7, stage: 'before', createdAt: '2026-12-01T12:00:00Z' },
			{ id: 6, stage: 'before', createdAt: '2026-12-01T10:00:00Z' }
		];
		expect(beforeAfterPair(list)).toEqual([7, 9]);
		expect(beforeAfterPair(list.filter((s) => s.stage === 'after'))).toBeNull();
	});
});
