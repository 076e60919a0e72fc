import { z } from 'zod';

/**
 * Money in Benchlight: every amount is an integer count of the currency's minor unit
 * (cents, pence, rappen; yen have none). Currencies are ISO 4217 codes.
 *
 * THE ROUNDING RULE (stated once, used everywhere): round half away from zero, applied
 * once per computed amount — once per estimate line (labour time × rate, part cost × markup),
 * once for the tax of the whole document, once for a percentage deposit. All intermediate
 * arithmetic is exact (BigInt rationals), so no float error reaches a rounded figure.
 */

/** ISO 4217 minor-unit exponents for the currencies a shop may choose. */
export const CURRENCY_EXPONENTS = {
	EUR: 2,
	GBP: 2,
	USD: 2,
	CHF: 2,
	CAD: 2,
	AUD: 2,
	SEK: 2,
	NOK: 2,
	DKK: 2,
	JPY: 0
} as const;

export type CurrencyCode = keyof typeof CURRENCY_EXPONENTS;
export const CURRENCY_CODES = Object.keys(CURRENCY_EXPONENTS) as [CurrencyCode, ...CurrencyCode[]];

export const depositSettingSchema = z.discriminatedUnion('kind', [
	z.object({ kind: z.literal('none') }),
	/** percent in basis points: 2500 = 25 % */
	z.object({ kind: z.literal('percent'), basisPoints: z.number().int().min(1).max(10000) }),
	z.object({ kind: z.literal('fixed'), amountMinor: z.number().int().min(1) })
]);
export type DepositSetting = z.infer<typeof depositSettingSchema>;

export const moneySettingsSchema = z.object({
	currency: z.enum(CURRENCY_CODES),
	/** tax rate in basis points: 2000 = 20 % */
	taxRateBasisPoints: z.number().int().min(0).max(10000),
	pricesIncludeTax: z.boolean(),
	/** parts markup over cost in basis points: 3000 = 30 % */
	partsMarkupBasisPoints: z.number().int().min(0).max(100000),
	/** labour rate per hour in minor units */
	labourRatePerHourMinor: z.number().int().min(0),
	deposit: depositSettingSchema
});
export type MoneySettings = z.infer<typeof moneySettingsSchema>;

/** Round numerator/denominator half away from zero, exactly. */
export function divRoundHalfAwayFromZero(numerator: bigint, denominator: bigint): number {
	if (denominator === 0n) throw new RangeError('division by zero');
	if (denominator < 0n) {
		numerator = -numerator;
		denominator = -denominator;
	}
	const negative = numerator < 0n;
	const abs = negative ? -numerator : numerator;
	const q = (abs * 2n + denominator) / (denominator * 2n);
	const result = negative ? -q : q;
	if (result > BigInt(Number.MAX_SAFE_INTEGER) || result < -BigInt(Number.MAX_SAFE_INTEGER)) {
		throw new RangeError('amount exceeds the safe integer range');
	}
	return Number(result);
}

function assertMinor(n: number, what: string): void {
	if (!Number.isSafeInteger(n))
		throw new RangeError(`${what} must be a whole number of minor units, got ${n}`);
}

/** Labour line: minutes × rate per hour, rounded once. */
export function labourLineMinor(durationMinutes: number, ratePerHourMinor: number): number {
	assertMinor(durationMinutes, 'durationMinutes');
	assertMinor(ratePerHourMinor, 'ratePerHourMinor');
	return divRoundHalfAwayFromZero(BigInt(durationMinutes) * BigInt(ratePerHourMinor), 60n);
}

/** Part line: quantity × cost marked up by basis points, rounded once for the line. */
export function partLineMinor(quantity: number, unitCostMinor: number, markupBasisPoints: number): number {
	assertMinor(quantity, 'quantity');
	assertMinor(unitCostMinor, 'unitCostMinor');
	assertMinor(markupBasisPoints, 'markupBasisPoints');
	return divRoundHalfAwayFromZero(
		BigInt(quantity) * BigInt(unitCostMinor) * BigInt(10000 + markupBasisPoints),
		10000n
	);
}

export interface DocumentTotals {
	netMinor: number;
	taxMinor: number;
	grossMinor: number;
}

/**
 * Totals of a document from its line amounts. If prices exclude tax, lines sum to net and
 * tax = round(net × rate). If prices include tax, lines sum to gross and
 * net = round(gross / (1 + rate)), tax = gross − net (so the three always add up).
 */
export function documentTotals(
	lineAmountsMinor: readonly number[],
	taxRateBasisPoints: number,
	pricesIncludeTax: boolean
): DocumentTotals {
	lineAmountsMinor.forEach((a) => assertMinor(a, 'line amount'));
	const sum = lineAmountsMinor.reduce((s, a) => s + BigInt(a), 0n);
	const rate = BigInt(taxRateBasisPoints);
	if (pricesIncludeTax) {
		const grossMinor = Number(sum);
		const netMinor = divRoundHalfAwayFromZero(sum * 10000n, 10000n + rate);
		return { netMinor, taxMinor: grossMinor - netMinor, grossMinor };
	}
	const netMinor = Number(sum);
	const taxMinor = divRoundHalfAwayFromZero(sum * rate, 10000n);
	return { netMinor, taxMinor, grossMinor: netMinor + taxMinor };
}

/** Deposit due on a gross total; a fixed deposit never exceeds the total. */
export function depositMinor(grossMinor: number, deposit: DepositSetting): number {
	assertMinor(grossMinor, 'grossMinor');
	switch (deposit.kind) {
		case 'none':
			return 0;
		case 'percent':
			return divRoundHalfAwayFromZero(BigInt(grossMinor) * BigInt(deposit.basisPoints), 10000n);
		case 'fixed':
			return Math.min(deposit.amountMinor, Math.max(grossMinor, 0));
	}
}

/** Balance due = total − deposit paid − other payments (refunds are negative payments). */
export function balanceDueMinor(
	totalMinor: number,
	depositPaidMinor: number,
	paymentsMinor: readonly number[]
): number {
	return totalMinor - depositPaidMinor - paymentsMinor.reduce((s, p) => s + p, 0);
}

/** Format minor units for display, with the currency's own number of decimals. */
export function formatMoney(amountMinor: number, currency: CurrencyCode, locale = 'en-GB'): string {
	assertMinor(amountMinor, 'amountMinor');
	const exponent = CURRENCY_EXPONENTS[currency];
	return new Intl.NumberFormat(locale, {
		style: 'currency',
		currency,
		minimumFractionDigits: exponent,
		maximumFractionDigits: exponent
	}).format(amountMinor / 10 ** exponent);
}

/**
 * A typed amount ("12", "12.5", "12,50") in minor units of `currency`, or null when it is not a
 * plain non-negative amount with at most the currency's number of decimals. No float is involved.
 */
export function parseMoney(text: string, currency: CurrencyCode): number | null {
	const exponent = CURRENCY_EXPONENTS[currency];
	const m = /^(\d{1,12})(?:[.,](\d+))?$/.exec(text.trim());
	if (!m) return null;
	const frac = m[2] ?? '';
	if (frac.length > exponent) return null;
	const n = Number(m[1]) * 10 ** exponent + Number(frac.padEnd(exponent, '0') || '0');
	return Number.isSafeInteger(n) ? n : null;
}
