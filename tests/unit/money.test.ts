import { describe, expect, it } from 'vitest';
import {
	balanceDueMinor,
	CURRENCY_EXPONENTS,
	depositMinor,
	divRoundHalfAwayFromZero,
	documentTotals,
	formatMoney,
	labourLineMinor,
	moneySettingsSchema,
	partLineMinor
} from '../../src/lib/money';

// All expected values below are worked by hand in the comment beside each check.

describe('rounding rule: half away from zero', () => {
	it('rounds exact halves away from zero and others to nearest', () => {
		expect(divRoundHalfAwayFromZero(5n, 2n)).toBe(3); // 2.5 -> 3
		expect(divRoundHalfAwayFromZero(3n, 2n)).toBe(2); // 1.5 -> 2 (half-even would give 2 too; see 5/2)
		expect(divRoundHalfAwayFromZero(-5n, 2n)).toBe(-3); // -2.5 -> -3
		expect(divRoundHalfAwayFromZero(-1n, 2n)).toBe(-1); // -0.5 -> -1
		expect(divRoundHalfAwayFromZero(7n, 3n)).toBe(2); // 2.333 -> 2
		expect(divRoundHalfAwayFromZero(8n, 3n)).toBe(3); // 2.667 -> 3
		expect(divRoundHalfAwayFromZero(5n, -2n)).toBe(-3); // -2.5 -> -3
		expect(() => divRoundHalfAwayFromZero(1n, 0n)).toThrow(RangeError);
	});
});

describe('estimate lines', () => {
	it('labour: minutes x hourly rate, rounded once', () => {
		expect(labourLineMinor(90, 4500)).toBe(6750); // 1.5 h x 45.00 = 67.50
		expect(labourLineMinor(25, 5000)).toBe(2083); // 25/60 x 50.00 = 20.8333 -> 20.83
		expect(labourLineMinor(1, 4530)).toBe(76); // 45.30 / 60 = 0.755 -> 0.76 (half up)
	});
	it('parts: quantity x cost x (1 + markup), rounded once per line', () => {
		expect(partLineMinor(3, 1234, 3000)).toBe(4813); // 3 x 12.34 = 37.02; x 1.3 = 48.126 -> 48.13
		expect(partLineMinor(1, 5, 5000)).toBe(8); // 0.05 x 1.5 = 0.075 -> 0.08
		expect(partLineMinor(2, 1000, 0)).toBe(2000); // no markup
		expect(() => partLineMinor(1, 1.5, 0)).toThrow(/whole number of minor units/);
	});
});

describe('document totals and tax', () => {
	it('prices exclude tax: tax on the net total, rounded once', () => {
		// 67.50 + 48.13 + 25.00 = 140.63; 20 % = 28.126 -> 28.13; gross 168.76
		expect(documentTotals([6750, 4813, 2500], 2000, false)).toEqual({
			netMinor: 14063,
			taxMinor: 2813,
			grossMinor: 16876
		});
	});
	it('prices include tax: net = gross / (1 + rate), tax is the difference', () => {
		// 120.00 at 20 % -> net 100.00, tax 20.00
		expect(documentTotals([12000], 2000, true)).toEqual({
			netMinor: 10000,
			taxMinor: 2000,
			grossMinor: 12000
		});
		// 10.00 at 20 % -> 8.3333 -> 8.33, tax 1.67
		expect(documentTotals([1000], 2000, true)).toEqual({ netMinor: 833, taxMinor: 167, grossMinor: 1000 });
		// 1.05 at 100 % -> 0.525 -> 0.53 (half away from zero), tax 0.52
		expect(documentTotals([105], 10000, true)).toEqual({ netMinor: 53, taxMinor: 52, grossMinor: 105 });
	});
	it('zero tax rate leaves net equal to gross', () => {
		expect(documentTotals([100, 200], 0, false)).toEqual({ netMinor: 300, taxMinor: 0, grossMinor: 300 });
	});
});

describe('deposit and balance', () => {
	it('deposit by setting', () => {
		expect(depositMinor(16876, { kind: 'none' })).toBe(0);
		expect(depositMinor(16876, { kind: 'percent', basisPoints: 2500 })).toBe(4219); // 168.76 / 4 = 42.19
		expect(depositMinor(10, { kind: 'percent', basisPoints: 2500 })).toBe(3); // 0.025 -> 0.03
		expect(depositMinor(3000, { kind: 'fixed', amountMinor: 5000 })).toBe(3000); // capped at the total
		expect(depositMinor(30000, { kind: 'fixed', amountMinor: 5000 })).toBe(5000);
	});
	it('balance = total - deposit - payments (refund negative)', () => {
		// 168.76 - 42.19 - 50.00 + 2.00 = 78.57
		expect(balanceDueMinor(16876, 4219, [5000, -200])).toBe(7857);
	});
});

describe('formatting and settings', () => {
	it('uses each currency’s own decimals (ISO 4217 minor unit)', () => {
		expect(CURRENCY_EXPONENTS.JPY).toBe(0); // ISO 4217: JPY has 0 minor digits
		expect(CURRENCY_EXPONENTS.EUR).toBe(2); // ISO 4217: EUR has 2
		expect(formatMoney(123456, 'USD', 'en-US')).toBe('$1,234.56');
		expect(formatMoney(1500, 'JPY', 'en-US')).toBe('¥1,500');
		expect(formatMoney(5, 'GBP', 'en-GB')).toBe('£0.05');
		expect(formatMoney(-250, 'GBP', 'en-GB')).toBe('-£2.50');
	});
	it('refuses an unknown currency and a fractional rate', () => {
		const ok = {
			currency: 'EUR',
			taxRateBasisPoints: 2000,
			pricesIncludeTax: true,
			partsMarkupBasisPoints: 3000,
			labourRatePerHourMinor: 4500,
			deposit: { kind: 'percent', basisPoints: 2500 }
		};
		expect(moneySettingsSchema.safeParse(ok).success).toBe(true);
		expect(moneySettingsSchema.safeParse({ ...ok, currency: 'XXX' }).success).toBe(false);
		expect(moneySettingsSchema.safeParse({ ...ok, taxRateBasisPoints: 19.5 }).success).toBe(false);
	});
});
