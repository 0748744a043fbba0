import { describe, expect, it } from 'vitest';
import { feedbackText, ordinal, roundFeedback, type FeedbackBid, type FeedbackItem } from './round-feedback';

const items: FeedbackItem[] = [
	{ ref: 'IT-1', lot: 'L1', quantity: 100 },
	{ ref: 'IT-2', lot: 'L1', quantity: 200 },
	{ ref: 'IT-3', lot: null, quantity: 10 }
];
const bids: FeedbackBid[] = [
	{
		supplier: 'A',
		lines: [
			{ item: 'IT-1', unitPrice: 10 },
			{ item: 'IT-2', unitPrice: 5 },
			{ item: 'IT-3', unitPrice: 8 }
		]
	},
	{
		supplier: 'B',
		lines: [
			{ item: 'IT-1', unitPrice: 9 },
			{ item: 'IT-2', unitPrice: 6 }
		]
	},
	{ supplier: 'C', lines: [{ item: 'IT-1', unitPrice: 9 }] }
];

describe('round feedback', () => {
	it('ranks each supplier per item by its own price, ties sharing a rank (competition ranking)', () => {
		// Hand computation: IT-1 prices A 10, B 9, C 9 -> B and C 1st (none lower), A 3rd (two lower).
		// IT-2: A 5, B 6 -> A 1st, B 2nd. IT-3: A alone -> 1st.
		const out = roundFeedback(items, bids, 'rank', 'item');
		expect(out.get('A')).toEqual([
			{ ref: 'IT-1', rank: 3 },
			{ ref: 'IT-2', rank: 1 },
			{ ref: 'IT-3', rank: 1 }
		]);
		expect(out.get('B')).toEqual([
			{ ref: 'IT-1', rank: 1 },
			{ ref: 'IT-2', rank: 2 }
		]);
		expect(out.get('C')).toEqual([{ ref: 'IT-1', rank: 1 }]);
	});

	it('ranks a lot on its total among the suppliers who priced all of it', () => {
		// Hand computation, lot L1: A 10×100 + 5×200 = 2000, B 9×100 + 6×200 = 2100; C priced only IT-1.
		const out = roundFeedback(items, bids, 'rank', 'lot');
		expect(out.get('A')).toEqual([
			{ ref: 'L1', rank: 1 },
			{ ref: 'IT-3', rank: 1 }
		]);
		expect(out.get('B')).toEqual([{ ref: 'L1', rank: 2 }]);
		expect(out.get('C')).toEqual([]);
	});

	it('gives the distance from the best price in percent, to one decimal', () => {
		// Hand computation: IT-1 best 9, A (10 - 9) / 9 = 11.11% -> 11.1; lot L1 B (2100 - 2000) / 2000 = 5.0%.
		expect(roundFeedback(items, bids, 'gap', 'item').get('A')![0]).toEqual({ ref: 'IT-1', gapPercent: 11.1 });
		expect(roundFeedback(items, bids, 'gap', 'lot').get('B')).toEqual([{ ref: 'L1', gapPercent: 5 }]);
		expect(roundFeedback(items, bids, 'gap', 'lot').get('A')![0]).toEqual({ ref: 'L1', gapPercent: 0 });
	});

	it('gives nothing when the buyer chose no feedback', () => {
		expect(roundFeedback(items, bids, 'none', 'item').get('A')).toEqual([]);
	});

	it('words a rank without the number of bidders', () => {
		expect(feedbackText({ ref: 'IT-1', rank: 3 })).toBe('3rd lowest price');
		expect(feedbackText({ ref: 'IT-1', rank: 1 })).toBe('1st: your price is the lowest');
		expect(feedbackText({ ref: 'IT-1', gapPercent: 11.1 })).toBe('11.1% above the best price');
		expect([1, 2, 3, 4, 11, 12, 13, 21, 22, 101].map(ordinal)).toEqual([
			'1st',
			'2nd',
			'3rd',
			'4th',
			'11th',
			'12th',
			'13th',
			'21st',
			'22nd',
			'101st'
		]);
	});
});
