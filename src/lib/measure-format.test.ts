import { describe, expect, it } from 'vitest';
import { db, dbSigned, hz, percent, sig, volts, watts } from './measure-format';

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
});
