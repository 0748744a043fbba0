import { describe, expect, it } from 'vitest';
import { parseProblem } from '$lib/award/core/problem';
import type { VisibleBid } from '../db/bids';
import { snapshotProblem } from './award-runs';

const bid = (supplier: string, currency: string, over: Partial<VisibleBid> = {}): VisibleBid => ({
	supplierOrganisationId: `org-${supplier}`,
	supplierName: supplier,
	revision: 1,
	round: 1,
	submittedAt: new Date('2026-12-01T10:00:00Z'),
	source: 'upload',
	capacity: null,
	currency,
	answers: {},
	lines: [],
	bundles: [],
	...over
});

// Invented rates: 1 USD = 0.9 EUR, 1 JPY = 0.006 EUR.
const rates = [
	{ currency: 'USD', rate: 0.9, source: 'invented for the test', rateDate: '2026-12-01' },
	{ currency: 'JPY', rate: 0.006, source: 'invented for the test', rateDate: '2026-12-01' }
];

describe('the award problem of an event with bids in several currencies', () => {
	it('converts prices, breaks and bundles at the fixed rate before adding freight and duty', () => {
		const problem = snapshotProblem(
			{ currency: 'EUR' },
			{
				items: [
					{
						ref: 'IT-1',
						quantity: '100',
						unit: 'C62',
						lot_ref: null,
						baseline_unit_price: null,
						freight_per_unit: '0.5',
						duty_per_unit: '0.25',
						order_multiple: null
					}
				],
				bids: [
					bid('A', 'USD', {
						lines: [
							{
								item: 'IT-1',
								unitPrice: '10',
								maxQuantity: null,
								packSize: null,
								priceBreaks: [{ fromQuantity: '50', unitPrice: '9' }]
							}
						],
						bundles: [{ ref: 'B1', price: '800', items: [{ item: 'IT-1', quantity: '100' }] }]
					}),
					bid('B', 'JPY', {
						lines: [{ item: 'IT-1', unitPrice: '1500', maxQuantity: null, packSize: null, priceBreaks: [] }]
					}),
					bid('C', 'EUR', {
						lines: [{ item: 'IT-1', unitPrice: '9.5', maxQuantity: null, packSize: null, priceBreaks: [] }]
					})
				],
				invitations: [],
				rates
			},
			[]
		);
		// By hand: A 10 USD × 0.9 = 9 EUR + 0.75 adders = 9.75; its break 9 × 0.9 = 8.1 + 0.75 = 8.85;
		// its bundle 800 × 0.9 = 720 + 0.75 × 100 = 795. B 1500 JPY × 0.006 = 9 + 0.75 = 9.75. C 9.5 + 0.75.
		expect(problem.bids.map((b) => [b.supplier, b.unitPrice, b.priceBreaks?.[0]?.unitPrice])).toEqual([
			['A', 9.75, 8.85],
			['B', 9.75, undefined],
			['C', 10.25, undefined]
		]);
		expect(problem.bundles?.[0]?.price).toBe(795);
		expect(problem.suppliers).toEqual([
			{ ref: 'A', bidCurrency: { code: 'USD', rate: 0.9 } },
			{ ref: 'B', bidCurrency: { code: 'JPY', rate: 0.006 } },
			{ ref: 'C' }
		]);
		expect(parseProblem(problem).ok).toBe(true);
	});

	it('refuses a bid in a currency the event has no rate for', () => {
		expect(() =>
			snapshotProblem({ currency: 'EUR' }, { items: [], bids: [bid('A', 'GBP')], invitations: [], rates }, [])
		).toThrow(/A's bid is in GBP, which has no rate on this event/);
	});
});
