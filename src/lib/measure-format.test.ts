import { describe, expect, it } from 'vitest';
import {
	db,
	dbSigned,
	hz,
	hzLabel,
	NO_SIGNAL,
	noiseLevel,
	ordersLabel,
	percent,
	sig,
	volts,
	watts,
	wattsLabel
} from './measure-format';

describe('measure-format', () => {
	it('keeps significant digits and scales units', () => {
		expect(sig(12.3456, 4)).toBe('12.35');
		expect(volts(0.0123456)).toEqual({ value: '12.35', unit: 'mV' });
		expect(volts(0.000012)).toEqual({ value: '12.00', unit: 'µV' });
		expect(volts(7.07107)).toEqual({ value: '7.071', unit: 'V' });
		expect(watts(0.5)).toEqual({ value: '500.0', unit: 'mW' });
		expect(hz(19_950)).toEqual({ value: '19.950', unit: 'kHz' });
	});
	it('writes minus signs and dashes', () => {
		expect(db(-3.456)).toBe('−3.46');
		expect(dbSigned(0.1)).toBe('+0.10');
		expect(db(null)).toBe('—');
		expect(db(-300)).toBe('−∞');
		expect(percent(0.012345)).toBe('0.0123');
		expect(percent(Number.NaN)).toBe('—');
	});
	it('scales power to W, mW, µW or nW with 4 significant digits (SI prefixes, BIPM SI Brochure §3)', () => {
		expect(watts(5e-9)).toEqual({ value: '5.000', unit: 'nW' });
		expect(wattsLabel(5e-9)).toBe('5.000 nW');
		expect(watts(2.3456e-6)).toEqual({ value: '2.346', unit: 'µW' });
		expect(watts(0.0123)).toEqual({ value: '12.30', unit: 'mW' });
		expect(watts(3.125)).toEqual({ value: '3.125', unit: 'W' });
		expect(watts(125)).toEqual({ value: '125.0', unit: 'W' });
		// 999.96 µW rounds to 1000 at 4 digits: read it as 1.000 mW instead.
		expect(watts(999.96e-6)).toEqual({ value: '1.000', unit: 'mW' });
		expect(sig(0.99996, 4)).toBe('1.000');
		expect(watts(0)).toEqual({ value: '0', unit: 'W' });
		expect(watts(undefined)).toEqual({ value: '—', unit: 'W' });
	});
	it('labels frequencies one way everywhere', () => {
		expect(hzLabel(20)).toBe('20 Hz');
		expect(hzLabel(1000)).toBe('1 kHz');
		// A fitted fundamental either side of 1 kHz is one label (it was "1000 Hz" below, "1 kHz" above).
		expect(hzLabel(999.9999999434614, { digits: 3 })).toBe('1 kHz');
		expect(hzLabel(1000.0000000321708, { digits: 3 })).toBe('1 kHz');
		expect(hzLabel(999.4, { digits: 3 })).toBe('999 Hz');
		expect(hzLabel(19_950)).toBe('19.95 kHz');
		expect(hzLabel(22_050)).toBe('22.05 kHz');
		expect(hzLabel(2000, { digits: 3, compact: true })).toBe('2k');
		expect(hzLabel(200, { compact: true })).toBe('200');
	});
});

describe('noise and no-signal formatting', () => {
	it('noise reads in µV and dBV re 1 V (REFERENCES.md §5, §13), a dash when missing', () => {
		// 20·lg(257.4e-6) = −71.79 dBV (definition of dBV).
		expect(noiseLevel(257.4e-6)).toEqual({ value: '257.4', unit: 'µV', dbv: '−71.79' });
		expect(noiseLevel(null)).toEqual({ value: '—', unit: 'V', dbv: '—' });
		expect(NO_SIGNAL).toBe('no signal');
	});
	it('orders as a short list', () => {
		expect(ordersLabel([5, 6, 7, 8, 9, 10])).toBe('H5–H10');
		expect(ordersLabel([2, 4])).toBe('H2, H4');
		expect(ordersLabel([])).toBe('');
	});
});
