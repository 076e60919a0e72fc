// The worksheet rules: the mains-setting flag, the bias and offset tolerance, power-up
// completeness, the bench gate for a long-stored unit and the safety check's completeness.
import { describe, expect, it } from 'vitest';
import {
	benchGate,
	biasSheetStatus,
	biasStatus,
	mainsSettingFlag,
	powerUpStatus,
	safetyStatus,
	withinTolerance
} from './worksheets';
import {
	DEFAULT_WORKSHEET_SETTINGS,
	biasSheetSchema,
	emptySheet,
	powerUpSheetSchema
} from './schemas/worksheets';
import { biasChannelExample, intakeExample, passedSafetySheet, powerUpExample } from './worksheet-examples';

const settings = DEFAULT_WORKSHEET_SETTINGS;

describe('mains-setting flag', () => {
	it('flags a 100 V or 120 V unit in a 230 V shop as the wrong mains', () => {
		// IEC 60038: 230 V is the standard low-voltage mains of 50 Hz systems; 100 V (Japan) and
		// 120 V (North America) belong to the other family, about half of it.
		expect(mainsSettingFlag(100, 230)).toMatchObject({ level: 'wrong-mains', flagged: true });
		expect(mainsSettingFlag(120, 230)).toMatchObject({ level: 'wrong-mains', flagged: true });
		expect(mainsSettingFlag(100, 230).message).toMatch(
			/Set for 100 V, the shop’s mains is 230 V: do not plug it in/
		);
	});

	it('flags the reverse: a 230 V or 240 V unit in a 120 V or 100 V shop', () => {
		expect(mainsSettingFlag(230, 120)).toMatchObject({ level: 'wrong-mains', flagged: true });
		expect(mainsSettingFlag(240, 100)).toMatchObject({ level: 'wrong-mains', flagged: true });
	});

	it('flags a same-family tap more than 5 % off, and passes one within 5 % (common practice)', () => {
		// 220 V tap on 240 V mains: +9 %.
		expect(mainsSettingFlag(220, 240)).toMatchObject({ level: 'off-nominal', flagged: true });
		expect(mainsSettingFlag(220, 240).message).toMatch(/\+9 %/);
		// 100 V tap on 120 V mains: +20 %, still the same family.
		expect(mainsSettingFlag(100, 120)).toMatchObject({ level: 'off-nominal', flagged: true });
		// 220 V tap on 230 V mains: +4.5 %, within the ±5 % a unit is built for.
		expect(mainsSettingFlag(220, 230)).toMatchObject({ level: 'ok', flagged: false });
		expect(mainsSettingFlag(230, 230)).toMatchObject({ level: 'ok', flagged: false });
		expect(mainsSettingFlag(117, 120)).toMatchObject({ level: 'ok', flagged: false });
	});

	it('asks for the setting when it has not been read', () => {
		expect(mainsSettingFlag(null, 230)).toMatchObject({ level: 'unknown', flagged: true });
	});
});

describe('bias tolerance (±10 % of target by default, common practice)', () => {
	it('judges each stage against the target, edges inclusive', () => {
		expect(withinTolerance(16.5, 15, 10)).toBe(true);
		expect(withinTolerance(13.5, 15, 10)).toBe(true);
		expect(withinTolerance(16.6, 15, 10)).toBe(false);
		expect(withinTolerance(13.4, 15, 10)).toBe(false);
		// A valve at 35 mA against a 40 mA target is 12.5 % low.
		expect(withinTolerance(35, 40, 10)).toBe(false);
		expect(withinTolerance(35, 40, 15)).toBe(true);
	});

	it('flags the stages out of tolerance and judges the last adjusted reading', () => {
		const s = biasStatus({ target: 15, asFound: 6.1, setCold: 14.8, warm: 17.2, afterSoak: null }, 10);
		expect(s.stages).toEqual({ asFound: false, setCold: true, warm: false });
		expect(s.final).toEqual({ stage: 'warm', value: 17.2, ok: false });
		const settled = biasStatus({ target: 15, asFound: 6.1, setCold: 14.8, warm: 17.2, afterSoak: 15.6 }, 10);
		expect(settled.final).toEqual({ stage: 'afterSoak', value: 15.6, ok: true });
	});

	it('a sheet names each channel out of tolerance, and an offset past the limit', () => {
		const sheet = biasSheetSchema.parse({
			channels: [
				biasChannelExample('L'),
				biasChannelExample('R', {
					biasMillivolts: { target: 15, asFound: 2, setCold: 15, warm: 18, afterSoak: null },
					offsetMillivolts: { cold: 12, warm: 64 }
				})
			],
			notes: ''
		});
		expect(biasSheetStatus(sheet, settings)).toEqual({
			outOfTolerance: ['R bias', 'R offset'],
			complete: true
		});
		expect(biasSheetStatus({ channels: [biasChannelExample('L')], notes: '' }, settings)).toEqual({
			outOfTolerance: [],
			complete: true
		});
	});

	it('takes bias either in mV or in mA, never both or neither', () => {
		const both = biasChannelExample('V1', {
			biasMilliamps: { target: 40, asFound: null, setCold: null, warm: null, afterSoak: null }
		});
		expect(biasSheetSchema.safeParse({ channels: [both], notes: '' }).success).toBe(false);
		const neither = biasChannelExample('V1', { biasMillivolts: null });
		expect(biasSheetSchema.safeParse({ channels: [neither], notes: '' }).success).toBe(false);
	});
});

describe('first power-up and the bench gate', () => {
	it('is complete with steps reaching 90 % of the unit’s mains and marked finished', () => {
		expect(powerUpStatus(powerUpExample(), 230)).toEqual({ complete: true, missing: [] });
		const short = powerUpExample({ steps: powerUpExample().steps.slice(0, 2), finished: false });
		expect(powerUpStatus(short, 230).missing).toEqual([
			'Reach full mains (at least 207 V; highest step so far 150 V)',
			'Mark the power-up finished once the unit held full mains without distress'
		]);
	});

	it('asks for the lamp wattage when a series lamp is used', () => {
		const r = powerUpSheetSchema.safeParse(powerUpExample({ method: 'series-lamp', lampWatts: null }));
		expect(r.success).toBe(false);
		expect(r.error!.issues.map((i) => i.path.join('.'))).toEqual(['lampWatts']);
	});

	it('shuts the bench for a stored-for-years unit until the power-up is complete', () => {
		const stored = intakeExample({ storedForYears: true });
		expect(benchGate(stored, null, settings).blocked).toBe(true);
		expect(benchGate(stored, powerUpExample({ finished: false }), settings).blocked).toBe(true);
		expect(benchGate(stored, powerUpExample(), settings)).toEqual({ blocked: false, reason: '' });
		expect(benchGate(intakeExample(), null, settings).blocked).toBe(false);
		expect(benchGate(null, null, settings).blocked).toBe(false);
		// A 120 V unit reaches full mains at 108 V, not the shop's 230 V.
		const usUnit = intakeExample({ storedForYears: true, mainsSettingVoltsRms: 120 });
		const steps = [{ ...powerUpExample().steps[0], mainsVoltsRms: 110 }];
		expect(benchGate(usUnit, powerUpExample({ steps }), settings).blocked).toBe(false);
	});
});

describe('safety check completeness', () => {
	it('passes when every item is recorded and none failed', () => {
		expect(safetyStatus(passedSafetySheet())).toEqual({ state: 'passed', problems: [] });
	});

	it('blocks on nothing recorded, a missing item, a missing reading or instrument, and a fail', () => {
		expect(safetyStatus(null).state).toBe('none');
		expect(safetyStatus(emptySheet('safety')).state).toBe('incomplete');
		const noReading = passedSafetySheet({
			earthContinuity: { result: 'pass', earthOhms: null, instrument: '', note: '' }
		});
		expect(safetyStatus(noReading)).toEqual({
			state: 'incomplete',
			problems: ['Earth continuity: give the reading (Ω)', 'Earth continuity: name the instrument used']
		});
		const failed = passedSafetySheet({
			insulation: { result: 'fail', insulationMegohms: 0.4, instrument: 'PT-2', note: '' }
		});
		expect(safetyStatus(failed)).toEqual({ state: 'failed', problems: ['Insulation resistance: failed'] });
	});

	it('needs earth continuity on an earthed unit, insulation or leakage on an unearthed one', () => {
		const earthedNa = passedSafetySheet({
			earthContinuity: { result: 'n-a', earthOhms: null, instrument: '', note: '' }
		});
		expect(safetyStatus(earthedNa).problems).toEqual(['Earth continuity applies to an earthed unit']);
		const classTwo = passedSafetySheet({
			earthed: false,
			earthContinuity: { result: 'n-a', earthOhms: null, instrument: '', note: '' },
			insulation: { result: 'n-a', insulationMegohms: null, instrument: '', note: '' }
		});
		expect(safetyStatus(classTwo).problems).toEqual([
			'An unearthed unit needs a passed insulation resistance or leakage current test'
		]);
	});
});
