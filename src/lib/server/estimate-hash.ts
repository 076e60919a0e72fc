// What a customer sees when approving an estimate, as one plain object, and its fingerprint
// (SHA-256 over RFC 8785 canonical JSON, the same helpers the sign-off uses). The approval
// record stores the hash the customer's page was built from; approveEstimate refuses when it
// differs from the estimate as stored, so nobody approves figures they were not shown.
import {
	documentTotals,
	labourLineMinor,
	partLineMinor,
	depositMinor,
	type CurrencyCode,
	type DepositSetting,
	type DocumentTotals
} from '$lib/money';
import { canonicalJson, sha256Hex } from './sign-off-hash';

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

export interface SeenEstimate {
	/** Version of this shape, so a later change can still verify old approvals. */
	shape: 1;
	estimateId: number;
	jobId: number;
	version: number;
	currency: CurrencyCode;
	pricesIncludeTax: boolean;
	taxRateBasisPoints: number;
	lines: EstimateLine[];
	totals: DocumentTotals;
	depositMinor: number;
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

export function buildSeenEstimate(
	ids: { estimateId: number; jobId: number; version: number },
	lines: readonly EstimateLineInput[],
	pricing: EstimatePricing
): SeenEstimate {
	const priced = priceLines(lines, pricing);
	const totals = documentTotals(
		priced.map((l) => l.amountMinor),
		pricing.taxRateBasisPoints,
		pricing.pricesIncludeTax
	);
	return {
		shape: 1,
		...ids,
		currency: pricing.currency,
		pricesIncludeTax: pricing.pricesIncludeTax,
		taxRateBasisPoints: pricing.taxRateBasisPoints,
		lines: priced,
		totals,
		depositMinor: depositMinor(totals.grossMinor, pricing.deposit)
	};
}

export function estimateFingerprint(seen: SeenEstimate): { canonical: string; sha256: string } {
	const canonical = canonicalJson(seen);
	return { canonical, sha256: sha256Hex(canonical) };
}

/** True when the hash the customer's page carried matches the estimate as stored now. */
export function seenHashMatches(seen: SeenEstimate, seenSha256: string): boolean {
	return /^[0-9a-f]{64}$/.test(seenSha256) && estimateFingerprint(seen).sha256 === seenSha256;
}
