import { describe, expect, it } from 'vitest';
import type { VisibleBid } from '../db/bids';
import { snapshotProblem } from './award-runs';

const item = (ref: string, extra: Partial<Record<string, string | null>> = {}) => ({
	ref,
	quantity: '100',
	unit: 'C62',
	lot_ref: 'L1',
	baseline_unit_price: null,
	freight_per_unit: null,
	duty_per_unit: null,
	order_multiple: null,
	...extra
});

const bid = (supplier: string, over: Partial<VisibleBid> = {}): VisibleBid => ({
	supplierOrganisationId: `org-${supplier}`,
	supplierName: supplier,
	round: 1,
	revision: 1,
	submittedAt: new Date('2026-12-01T10:00:00Z'),
	source: 'upload',
	capacity: null,
	currency: 'EUR',
	lines: [],
	bundles: [],
	answers: {},
	...over
});

const line = (item: string, unitPrice: string, over: Partial<VisibleBid['lines'][number]> = {}) => ({
	item,
	unitPrice,
	maxQuantity: null,
	packSize: null,
	priceBreaks: [],
	...over
});

describe('the award problem of an event (snapshotProblem)', () => {
	it('prices every bid at landed cost: unit price + freight + duty per unit', () => {
		const problem = snapshotProblem(
			{ currency: 'EUR' },
			{
				items: [item('IT-1', { freight_per_unit: '0.5', duty_per_unit: '0.25' }), item('IT-2')],
				bids: [bid('A', { lines: [line('IT-1', '4'), line('IT-2', '5')] })],
				invitations: []
			},
			[]
		);
		// IT-1: 4 + 0.5 + 0.25; IT-2 has no adders.
		expect(problem.bids).toEqual([
			{ supplier: 'A', item: 'IT-1', unitPrice: 4.75 },
			{ supplier: 'A', item: 'IT-2', unitPrice: 5 }
		]);
		expect(problem.items).toEqual([
			{ ref: 'IT-1', quantity: 100, unit: 'C62', lot: 'L1' },
			{ ref: 'IT-2', quantity: 100, unit: 'C62', lot: 'L1' }
		]);
	});

	it('leaves withdrawn bids out, suppliers and lines alike', () => {
		const problem = snapshotProblem(
			{ currency: 'EUR' },
			{
				items: [item('IT-1')],
				bids: [bid('A', { lines: [line('IT-1', '4')] }), bid('B', { source: 'withdrawal' })],
				invitations: []
			},
			[]
		);
		expect(problem.suppliers.map((s) => s.ref)).toEqual(['A']);
		expect(problem.bids.map((b) => b.supplier)).toEqual(['A']);
	});

	it('carries the adders into price breaks and bundles (bundle: adder × quantity of each item)', () => {
		const problem = snapshotProblem(
			{ currency: 'EUR' },
			{
				items: [item('IT-1', { freight_per_unit: '1' }), item('IT-2', { duty_per_unit: '0.5' })],
				bids: [
					bid('A', {
						lines: [
							line('IT-1', '10', {
								maxQuantity: '80',
								priceBreaks: [{ fromQuantity: '50', unitPrice: '9' }]
							})
						],
						bundles: [
							{
								ref: 'Pair',
								price: '100',
								items: [
									{ item: 'IT-1', quantity: '10' },
									{ item: 'IT-2', quantity: '4' }
								]
							}
						]
					})
				],
				invitations: []
			},
			[]
		);
		expect(problem.bids).toEqual([
			{
				supplier: 'A',
				item: 'IT-1',
				unitPrice: 11,
				maxQuantity: 80,
				priceBreaks: [{ fromQuantity: 50, unitPrice: 10 }]
			}
		]);
		// 100 + 10 × 1 (freight of IT-1) + 4 × 0.5 (duty of IT-2).
		expect(problem.bundles).toEqual([
			{
				ref: 'A / Pair',
				supplier: 'A',
				price: 112,
				items: [
					{ item: 'IT-1', quantity: 10 },
					{ item: 'IT-2', quantity: 4 }
				]
			}
		]);
	});

	it('gives suppliers the buyer’s tags and their capacity, and items their baseline', () => {
		const problem = snapshotProblem(
			{ currency: 'USD' },
			{
				items: [item('IT-1', { baseline_unit_price: '7.5', lot_ref: null })],
				bids: [
					bid('A', { capacity: '250', currency: 'USD', lines: [line('IT-1', '4')] }),
					bid('B', { currency: 'USD', lines: [line('IT-1', '5')] })
				],
				invitations: [
					{ supplier_organisation_id: 'org-A', tags: ['small_business', 'local'] },
					{ supplier_organisation_id: 'org-B', tags: [] }
				]
			},
			[{ type: 'exclude', scope: 'event', who: { tag: 'local' } }] as never
		);
		expect(problem.currency).toBe('USD');
		expect(problem.items).toEqual([{ ref: 'IT-1', quantity: 100, unit: 'C62', baselineUnitPrice: 7.5 }]);
		expect(problem.suppliers).toEqual([
			{ ref: 'A', capacity: 250, tags: ['small_business', 'local'] },
			{ ref: 'B' }
		]);
		expect(problem.rules).toEqual([{ type: 'exclude', scope: 'event', who: { tag: 'local' } }]);
	});

	it('rounds landed prices to six decimals, so float noise never reaches the problem’s hash', () => {
		const problem = snapshotProblem(
			{ currency: 'EUR' },
			{
				items: [item('IT-1', { freight_per_unit: '0.1', duty_per_unit: '0.2' })],
				bids: [
					bid('A', {
						lines: [line('IT-1', '0.3', { priceBreaks: [{ fromQuantity: '10', unitPrice: '0.7' }] })]
					})
				],
				invitations: []
			},
			[]
		);
		// 0.3 + 0.1 + 0.2 is 0.6000000000000001 in floating point.
		expect(problem.bids[0]!.unitPrice).toBe(0.6);
		expect(problem.bids[0]!.priceBreaks).toEqual([{ fromQuantity: 10, unitPrice: 1 }]);
	});
});
