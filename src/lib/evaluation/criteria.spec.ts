import { describe, expect, it } from 'vitest';
import {
	adjustmentOf,
	evaluatedPrice,
	evaluatedUnitCost,
	pointsBeyond,
	rankReversals,
	relativeScores,
	type Criterion
} from './criteria';

const leadTime: Criterion = {
	ref: 'LT',
	name: 'Lead time',
	unit: 'days',
	answeredBy: 'supplier',
	basis: 'percent_of_price',
	rate: 0.2,
	threshold: 5,
	direction: 'above'
};
const quality: Criterion = {
	ref: 'Q',
	name: 'Quality',
	unit: 'points',
	answeredBy: 'evaluator',
	basis: 'per_unit',
	rate: 0.5,
	threshold: 8,
	direction: 'below'
};
const account: Criterion = {
	ref: 'ACC',
	name: 'Account set-up',
	unit: 'steps',
	answeredBy: 'supplier',
	basis: 'per_supplier',
	rate: 100,
	threshold: 0,
	direction: 'above'
};

describe('money-valued criteria', () => {
	it('counts only the points beyond the threshold, on the costly side', () => {
		// Hand: lead time 15 days, threshold 5, above → 10 points; 3 days → 0 points.
		expect(pointsBeyond(leadTime, 15)).toBe(10);
		expect(pointsBeyond(leadTime, 3)).toBe(0);
		// Hand: quality 6 with threshold 8, below → 2 points; 9 → 0.
		expect(pointsBeyond(quality, 6)).toBe(2);
		expect(pointsBeyond(quality, 9)).toBe(0);
	});

	it('adds a percentage of the price per day of lead time beyond 5 days', () => {
		// Hand: 15 days → (15 - 5) × 0.2 % = 2 %; a unit price of 100 becomes 100 × 1.02 = 102.
		const { adjustment, missing } = adjustmentOf([leadTime], { LT: 15 });
		expect(missing).toEqual([]);
		expect(adjustment).toEqual({ percentOfPrice: 2, perUnit: 0, perSupplier: 0 });
		expect(evaluatedUnitCost(100, adjustment)).toBe(102);
	});

	it('adds per unit and per supplier amounts and sums the criteria', () => {
		// Hand: LT 10 days → 5 × 0.2 = 1 %; Q 6 → 2 × 0.5 = 1 per unit; ACC 3 → 3 × 100 = 300 once.
		// Unit price 50 → 50 × 1.01 + 1 = 51.5; a bundle of 4 units at 180 → 180 × 1.01 + 4 × 1 = 185.8.
		const { adjustment } = adjustmentOf([leadTime, quality, account], { LT: 10, Q: 6, ACC: 3 });
		expect(adjustment).toEqual({ percentOfPrice: 1, perUnit: 1, perSupplier: 300 });
		expect(evaluatedUnitCost(50, adjustment)).toBe(51.5);
		expect(evaluatedPrice(180, 4, adjustment)).toBe(185.8);
	});

	it('names the criteria a supplier has not answered', () => {
		expect(adjustmentOf([leadTime, quality], { LT: 4 }).missing).toEqual(['Q']);
	});
});

describe('relative scoring (a view only)', () => {
	// Constructed by hand, price weight 50 %: score = 0.5 × 100 × lowest / price + 0.5 × quality.
	// All three bids in, lowest price 100:
	//   A: 50 × 100/100 = 50     + 0.5 × 40 = 20 → 70
	//   B: 50 × 100/120 = 41.667 + 0.5 × 70 = 35 → 76.667
	//   C: 50 × 100/150 = 33.333 + 0.5 × 88 = 44 → 77.333   order C, B, A
	// A removed, lowest price 120:
	//   B: 50 × 120/120 = 50 + 35 → 85
	//   C: 50 × 120/150 = 40 + 44 → 84                         order B, C: C and B swap
	// Removing B (lowest stays 100) or C changes no score of the others: no reversal there.
	const bids = [
		{ supplier: 'A', price: 100, quality: 40 },
		{ supplier: 'B', price: 120, quality: 70 },
		{ supplier: 'C', price: 150, quality: 88 }
	];

	it('scores each price against the lowest one', () => {
		const scores = relativeScores(bids, 0.5);
		expect(scores.map((s) => s.supplier)).toEqual(['C', 'B', 'A']);
		expect(scores.map((s) => s.score)).toEqual([
			expect.closeTo(77.333, 3),
			expect.closeTo(76.667, 3),
			expect.closeTo(70, 9)
		]);
	});

	it('detects that removing A reverses the order of C and B', () => {
		const reversals = rankReversals(bids, 0.5);
		expect(reversals).toHaveLength(1);
		expect(reversals[0]).toMatchObject({ removed: 'A', ahead: 'C', behind: 'B' });
		expect(reversals[0]!.after.ahead).toBeCloseTo(84, 9);
		expect(reversals[0]!.after.behind).toBeCloseTo(85, 9);
	});

	it('finds no reversal when price alone decides', () => {
		// With weight 1 the score is 100 × lowest / price: the order is the order of prices, whoever is removed.
		expect(rankReversals(bids, 1)).toEqual([]);
	});
});
