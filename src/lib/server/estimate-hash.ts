// What a customer sees when approving an estimate, as one plain object, and its fingerprint
// (SHA-256 over RFC 8785 canonical JSON, the same helpers the sign-off uses). The approval
// record stores the hash the customer's page was built from; decideEstimate refuses when it
// differs from the estimate as stored, so nobody approves figures they were not shown.
import {
	priceDocument,
	type EstimateLine,
	type EstimateLineInput,
	type EstimatePricing
} from '$lib/estimate-pricing';
import type { CurrencyCode, DocumentTotals } from '$lib/money';
import { canonicalJson, sha256Hex } from './sign-off-hash';

export type { EstimateLine, EstimateLineInput, EstimatePricing };
export { priceLines } from '$lib/estimate-pricing';

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

export function buildSeenEstimate(
	ids: { estimateId: number; jobId: number; version: number },
	lines: readonly EstimateLineInput[],
	pricing: EstimatePricing
): SeenEstimate {
	return { shape: 1, ...ids, ...priceDocument(lines, pricing) };
}

export function estimateFingerprint(seen: SeenEstimate): { canonical: string; sha256: string } {
	const canonical = canonicalJson(seen);
	return { canonical, sha256: sha256Hex(canonical) };
}

/** True when the hash the customer's page carried matches the estimate as stored now. */
export function seenHashMatches(seen: SeenEstimate, seenSha256: string): boolean {
	return /^[0-9a-f]{64}$/.test(seenSha256) && estimateFingerprint(seen).sha256 === seenSha256;
}
