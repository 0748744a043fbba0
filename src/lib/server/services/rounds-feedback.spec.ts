// What a round's feedback compares (feedbackBids): prices at the item's quantity with their price breaks,
// and never a line or bid the buyer excluded as abnormally low. Invented prices; ranks by hand.
import { describe, expect, it } from 'vitest';
import { roundFeedback } from '$lib/round-feedback';
import { feedbackBids } from './rounds';

const items = [
	{ ref: 'IT-1', quantity: '100' },
	{ ref: 'IT-2', quantity: '50' }
];
const bids = [
	// A: 10.00 a unit, 8.00 from 100 units (an all-units break the whole quantity reaches).
	{
		supplierOrganisationId: 'A',
		lines: [{ item: 'IT-1', unitPrice: '10', priceBreaks: [{ fromQuantity: '100', unitPrice: '8' }] }]
	},
	{ supplierOrganisationId: 'B', lines: [{ item: 'IT-1', unitPrice: '9', priceBreaks: [] }] },
	// C: 5.00 on IT-1, excluded by the buyer as abnormally low; 7.00 on IT-2, not excluded.
	{
		supplierOrganisationId: 'C',
		lines: [
			{ item: 'IT-1', unitPrice: '5', priceBreaks: [] },
			{ item: 'IT-2', unitPrice: '7', priceBreaks: [] }
		]
	}
];
const exclusions = [{ supplier_organisation_id: 'C', item_ref: 'IT-1' }];

describe('the bids a round’s feedback compares', () => {
	it('prices each line at the item’s quantity and leaves out what the buyer excluded', () => {
		expect(feedbackBids(items, bids, exclusions)).toEqual([
			{ supplier: 'A', lines: [{ item: 'IT-1', unitPrice: 8 }] },
			{ supplier: 'B', lines: [{ item: 'IT-1', unitPrice: 9 }] },
			{ supplier: 'C', lines: [{ item: 'IT-2', unitPrice: 7 }] }
		]);
	});

	it('ranks A first on IT-1: 8.00 at 100 units against B’s 9.00, C’s excluded 5.00 out of it', () => {
		// By hand: without the break and with C's line, A (10.00) would be third of three.
		const feedback = roundFeedback(
			items.map((i) => ({ ref: i.ref, lot: null, quantity: Number(i.quantity) })),
			feedbackBids(items, bids, exclusions),
			'rank',
			'item'
		);
		expect(feedback.get('A')).toEqual([{ ref: 'IT-1', rank: 1 }]);
		expect(feedback.get('B')).toEqual([{ ref: 'IT-1', rank: 2 }]);
		expect(feedback.get('C')).toEqual([{ ref: 'IT-2', rank: 1 }]);
		// A whole bid excluded (item_ref null) leaves nothing of C's.
		const whole = feedbackBids(items, bids, [{ supplier_organisation_id: 'C', item_ref: null }]);
		expect(whole.find((b) => b.supplier === 'C')!.lines).toEqual([]);
	});
});
