import { describe, expect, it } from 'vitest';
import { priceAtQuantity } from './prices';

// All-units price breaks (common practice in bid forms): the whole quantity is priced at the tier it
// reaches, "from 100: 8" meaning 100 units or more cost 8 each, all of them.
describe('the price of a bid at a quantity', () => {
	const bid = {
		unitPrice: 9,
		priceBreaks: [
			{ fromQuantity: 500, unitPrice: 7 },
			{ fromQuantity: 100, unitPrice: 8 }
		]
	};

	it('reaches the highest break at or below the quantity, with the breaks in any order', () => {
		expect([0, 99, 100, 499, 500, 10_000].map((q) => priceAtQuantity(bid, q))).toEqual([9, 9, 8, 8, 7, 7]);
	});

	it('is the bid’s own price without breaks', () => {
		expect(priceAtQuantity({ unitPrice: 4.5 }, 1_000)).toBe(4.5);
	});

	it('lets a quantity within the tolerance below a break reach it, and no further', () => {
		expect(priceAtQuantity(bid, 99.9999995, 1e-6)).toBe(8);
		expect(priceAtQuantity(bid, 99.999998, 1e-6)).toBe(9);
		expect(priceAtQuantity(bid, 99.9999995)).toBe(9);
	});
});
