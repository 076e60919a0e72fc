import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import {
	buildSeenEstimate,
	estimateFingerprint,
	seenHashMatches,
	type EstimatePricing
} from '../../src/lib/server/estimate-hash';

const pricing: EstimatePricing = {
	currency: 'EUR',
	taxRateBasisPoints: 2000,
	pricesIncludeTax: false,
	partsMarkupBasisPoints: 3000,
	labourRatePerHourMinor: 4500,
	deposit: { kind: 'percent', basisPoints: 2500 }
};
const ids = { estimateId: 7, jobId: 3, version: 2 };
const lines = [
	{ kind: 'labour' as const, description: 'Recap power supply', durationMinutes: 90 },
	{ kind: 'part' as const, description: 'C12 4700 µF', partId: 4, quantity: 3, unitCostMinor: 1234 },
	{ kind: 'fee' as const, description: 'Bench fee', amountMinor: 2500 }
];

describe('estimate as seen by the customer', () => {
	it('prices lines and totals with the money rules (worked by hand)', () => {
		const seen = buildSeenEstimate(ids, lines, pricing);
		expect(seen.lines.map((l) => l.amountMinor)).toEqual([6750, 4813, 2500]); // 1.5 h x 45; 3 x 12.34 x 1.3 = 48.126
		expect(seen.totals).toEqual({ netMinor: 14063, taxMinor: 2813, grossMinor: 16876 }); // 20 % of 140.63 = 28.126
		expect(seen.depositMinor).toBe(4219); // 25 % of 168.76
	});

	it('hash is SHA-256 of RFC 8785 canonical JSON (keys sorted, no spaces)', () => {
		const seen = buildSeenEstimate(ids, lines, pricing);
		const { canonical, sha256 } = estimateFingerprint(seen);
		expect(canonical.startsWith('{"currency":"EUR","depositMinor":4219,"estimateId":7,')).toBe(true); // RFC 8785 §3.2.3 key order
		expect(sha256).toBe(createHash('sha256').update(canonical, 'utf8').digest('hex')); // FIPS 180-4 via node:crypto
		// key order of the input object does not matter
		const reordered = JSON.parse(
			JSON.stringify(
				seen,
				Object.keys(seen)
					.reverse()
					.concat(['kind', 'description', 'amountMinor', 'netMinor', 'taxMinor', 'grossMinor'])
			)
		);
		expect(estimateFingerprint(reordered).sha256).toBe(sha256);
	});

	it('any changed figure gives another hash, and approval with a stale hash is refused', () => {
		const seen = buildSeenEstimate(ids, lines, pricing);
		const { sha256 } = estimateFingerprint(seen);
		expect(seenHashMatches(seen, sha256)).toBe(true);
		const revised = buildSeenEstimate(
			ids,
			[...lines.slice(0, 2), { kind: 'fee' as const, description: 'Bench fee', amountMinor: 2501 }],
			pricing
		);
		expect(estimateFingerprint(revised).sha256).not.toBe(sha256);
		expect(seenHashMatches(revised, sha256)).toBe(false);
		expect(seenHashMatches(seen, sha256.toUpperCase())).toBe(false);
		expect(seenHashMatches(seen, 'not-a-hash')).toBe(false);
	});
});
