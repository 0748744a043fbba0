// The relative-scoring view (services/criteria.ts relativeView) compares totals in the event currency: a
// bid in another currency is converted at the event's fixed rate first, as the tabulation and the runs do.
import { describe, expect, it } from 'vitest';
import type { VisibleBid } from '$lib/server/db/bids';
import { relativeView } from '$lib/server/services/criteria';

const bid = (supplier: string, currency: string, unitPrice: string): VisibleBid => ({
	supplierOrganisationId: `org-${supplier}`,
	supplierName: supplier,
	revision: 1,
	round: 1,
	submittedAt: new Date('2026-12-01T10:00:00Z'),
	source: 'upload',
	capacity: null,
	currency,
	answers: {},
	lines: [{ item: 'IT-1', unitPrice, maxQuantity: null, packSize: null, priceBreaks: [] }],
	bundles: []
});

// Invented rate: 1 USD = 0.9 EUR.
const rates = [{ currency: 'USD', rate: 0.9, source: 'invented for the test', rateDate: '2026-12-01' }];

describe('the relative-scoring view of bids in several currencies', () => {
	it('compares the totals in the event currency at the fixed rate', () => {
		// 100 units: A 10 EUR → 1,000 EUR; B 10 USD → 9 EUR → 900 EUR (not 1,000 "of mixed money").
		// Weight 50 %, both 50 quality points: B 50 × 900/900 + 25 = 75; A 50 × 900/1,000 + 25 = 70.
		const view = relativeView(
			[bid('A', 'EUR', '10'), bid('B', 'USD', '10')],
			new Map([['IT-1', 100]]),
			new Map([
				['org-A', 50],
				['org-B', 50]
			]),
			0.5,
			{ currency: 'EUR', rates }
		);
		expect(view.scores.map((s) => [s.supplier, s.price, s.score])).toEqual([
			['B', 900, 75],
			['A', 1000, 70]
		]);
	});
});
