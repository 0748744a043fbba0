// Every expected value below is computed by hand in the comment beside it, with the module's rules (30 %
// below the others' median or the baseline, Tukey's fence with k = 1.5, at least 3 other bids) and the
// type-7 quartile (Hyndman & Fan 1996, definition 7; R's default, Excel's QUARTILE.INC). Prices are invented.
import { describe, expect, it } from 'vitest';
import { describeLowReason, quantile7, screenBids, screenPrice } from './abnormally-low';

describe('quantile7', () => {
	it('interpolates between order statistics as R type 7 and QUARTILE.INC do', () => {
		// 1,2,3,4: Q1 at h = 3 × 0.25 = 0.75 → 1 + 0.75 × (2 − 1) = 1.75 (QUARTILE.INC({1,2,3,4},1) = 1.75);
		// median at h = 1.5 → 2.5; Q3 at h = 2.25 → 3 + 0.25 = 3.25.
		expect(quantile7([1, 2, 3, 4], 0.25)).toBeCloseTo(1.75, 12);
		expect(quantile7([1, 2, 3, 4], 0.5)).toBeCloseTo(2.5, 12);
		expect(quantile7([1, 2, 3, 4], 0.75)).toBeCloseTo(3.25, 12);
		expect(quantile7([7], 0.25)).toBe(7);
	});
});

describe('screenPrice', () => {
	it('flags a price more than 30 % below the median of the others, and below their lower fence', () => {
		// Others 10, 11, 12: median 11, threshold 0.7 × 11 = 7.7; 6 < 7.7, 1 − 6/11 = 0.4545… below.
		// Q1 at h = 0.5 → 10.5, Q3 at h = 1.5 → 11.5, fence 10.5 − 1.5 × 1 = 9; 6 < 9.
		const reasons = screenPrice(6, [12, 10, 11], null);
		expect(reasons).toHaveLength(2);
		expect(reasons[0]).toMatchObject({ rule: 'median', median: 11, others: 3 });
		expect(reasons[0]!.rule === 'median' && reasons[0]!.below).toBeCloseTo(5 / 11, 12);
		expect(reasons[1]).toMatchObject({ rule: 'fence', fence: 9, q1: 10.5, q3: 11.5 });
	});

	it('does not flag on the fence alone: 8 is below the fence 9 but above 0.7 × 11 = 7.7', () => {
		expect(screenPrice(8, [10, 11, 12], null)).toEqual([]);
		// Tightly grouped others 20, 20, 21: fence 20 − 1.5 × 0.5 = 19.25, yet 19 is ordinary competition.
		expect(screenPrice(19, [20, 20, 21], null)).toEqual([]);
	});

	it('with fewer than 3 other bids compares with the baseline only', () => {
		// Others 10 and 11 are too few; baseline 10: 0.7 × 10 = 7 > 1, 1 − 1/10 = 0.9 below.
		expect(screenPrice(1, [10, 11], 10)).toEqual([{ rule: 'baseline', baseline: 10, below: 0.9 }]);
		expect(screenPrice(1, [10, 11], null)).toEqual([]);
		// Exactly 30 % below is not "more than": 7 = 0.7 × 10.
		expect(screenPrice(7, [], 10)).toEqual([]);
	});
});

describe('screenBids', () => {
	it('flags the planted line and neither its neighbours nor the bid total it hardly moves', () => {
		// Items (quantity, baseline): A (1, 10), B (2, 20), C (10, none); suppliers 0-3; supplier 3 has no C.
		// Line A/3 = 5: others 10, 10.5, 11: median 10.5 → 7.35 > 5 (1 − 5/10.5 below); Q1 10.25, Q3 10.75,
		// fence 10.25 − 0.75 = 9.5 > 5; baseline 7 > 5 (0.5 below). Line A/0 = 10: others 5, 10.5, 11:
		// median 10.5 → 7.35 < 10, not flagged. B and C lie within 5 % of each other: nothing.
		// Total of 3 = 5 + 2 × 20 = 45; on the same items 0 has 10 + 40 = 50, 1 has 10.5 + 42 = 52.5, 2 has
		// 11 + 38 = 49: ratios 0.9, 0.857, 0.918, median 0.9 ≥ 0.7. Baseline of A and B 10 + 40 = 50: 45 ≥ 35.
		const N = NaN;
		const result = screenBids({
			items: [
				{ quantity: 1, baseline: 10 },
				{ quantity: 2, baseline: 20 },
				{ quantity: 10, baseline: null }
			],
			suppliers: 4,
			prices: [10, 10.5, 11, 5, 20, 21, 19, 20, 3, 3, 3.1, N]
		});
		expect(result.lines.map((l) => [l.item, l.supplier, l.reasons.map((r) => r.rule)])).toEqual([
			[0, 3, ['median', 'fence', 'baseline']]
		]);
		expect(result.totals).toEqual([]);
	});

	it('flags a total more than 30 % below the others on the same items, not on items it did not price', () => {
		// One item of quantity 2 at 10, 10, 10, 6: totals 20, 20, 20, 12; ratios of 3: 0.6 each, median
		// 0.6 < 0.7 → 0.4 below, the others' median total 12 / 0.6 = 20. The line 6 < 7 is flagged too.
		const low = screenBids({
			items: [{ quantity: 2, baseline: null }],
			suppliers: 4,
			prices: [10, 10, 10, 6]
		});
		expect(low.totals).toHaveLength(1);
		expect(low.totals[0]).toMatchObject({ supplier: 3, total: 12 });
		expect(low.totals[0]!.reasons[0]).toMatchObject({ rule: 'median', others: 3 });
		expect(low.totals[0]!.reasons[0]!.rule === 'median' && low.totals[0]!.reasons[0]!.median).toBeCloseTo(
			20,
			9
		);
		// Supplier 3 prices only the first item (10, as everyone): its total 10 against the others' 110 over
		// both items would look 91 % lower, but on the same items every ratio is 1: no flag.
		const partial = screenBids({
			items: [
				{ quantity: 1, baseline: null },
				{ quantity: 1, baseline: null }
			],
			suppliers: 4,
			prices: [10, 10, 10, 10, 100, 100, 100, NaN]
		});
		expect(partial).toEqual({ lines: [], totals: [] });
	});

	it('describes each reason in plain words', () => {
		const money = (v: number) => v.toFixed(2);
		expect(describeLowReason({ rule: 'baseline', baseline: 10, below: 0.5 }, money)).toBe(
			'50 % below the baseline (10.00)'
		);
		expect(describeLowReason({ rule: 'median', median: 10.5, others: 3, below: 1 - 5 / 10.5 }, money)).toBe(
			'52.4 % below the median of the 3 other bids (10.50)'
		);
	});
});
