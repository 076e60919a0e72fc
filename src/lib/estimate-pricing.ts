// Pricing an estimate from its drafted lines and the shop's settings: each line rounded once,
// then the document's totals and deposit (rules in $lib/money). Shared by the server (which
// freezes and fingerprints what it sends) and the browser (the draft's live preview).
import {
	documentTotals,
	labourLineMinor,
	partLineMinor,
	depositMinor,
	type CurrencyCode,
	type DepositSetting,
	type DocumentTotals
} from './money';

export type EstimateLineInput =
	| { kind: 'labour'; description: string; durationMinutes: number }
	| { kind: 'part'; description: string; partId: number | null; quantity: number; unitCostMinor: number }
	| { kind: 'fixed'; description: string; quantity: number; unitPriceMinor: number }
	| { kind: 'fee'; description: string; amountMinor: number };

export interface EstimateLine {
	kind: EstimateLineInput['kind'];
	description: string;
	amountMinor: number;
}

export interface EstimatePricing {
	currency: CurrencyCode;
	taxRateBasisPoints: number;
	pricesIncludeTax: boolean;
	partsMarkupBasisPoints: number;
	labourRatePerHourMinor: number;
	deposit: DepositSetting;
}

/** Price each line with the shop's settings (each line rounded once, see money.ts). */
export function priceLines(lines: readonly EstimateLineInput[], pricing: EstimatePricing): EstimateLine[] {
	return lines.map((line) => {
		switch (line.kind) {
			case 'labour':
				return {
					kind: line.kind,
					description: line.description,
					amountMinor: labourLineMinor(line.durationMinutes, pricing.labourRatePerHourMinor)
				};
			case 'part':
				return {
					kind: line.kind,
					description: line.description,
					amountMinor: partLineMinor(line.quantity, line.unitCostMinor, pricing.partsMarkupBasisPoints)
				};
			case 'fixed':
				return {
					kind: line.kind,
					description: line.description,
					amountMinor: partLineMinor(line.quantity, line.unitPriceMinor, 0)
				};
			case 'fee':
				return { kind: line.kind, description: line.description, amountMinor: line.amountMinor };
		}
	});
}

export interface PricedDocument {
	currency: CurrencyCode;
	pricesIncludeTax: boolean;
	taxRateBasisPoints: number;
	lines: EstimateLine[];
	totals: DocumentTotals;
	depositMinor: number;
}

/** Lines priced, totals and the deposit the shop asks at approval. */
export function priceDocument(lines: readonly EstimateLineInput[], pricing: EstimatePricing): PricedDocument {
	const priced = priceLines(lines, pricing);
	const totals = documentTotals(
		priced.map((l) => l.amountMinor),
		pricing.taxRateBasisPoints,
		pricing.pricesIncludeTax
	);
	return {
		currency: pricing.currency,
		pricesIncludeTax: pricing.pricesIncludeTax,
		taxRateBasisPoints: pricing.taxRateBasisPoints,
		lines: priced,
		totals,
		depositMinor: depositMinor(totals.grossMinor, pricing.deposit)
	};
}
