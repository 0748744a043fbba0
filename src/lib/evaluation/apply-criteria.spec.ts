import { afterAll, describe, expect, it } from 'vitest';
import { solveAward } from '$lib/award/core/engine';
import { parseProblem, type AwardProblem } from '$lib/award/core/problem';
import { SolverPool } from '$lib/award/runtime/pool';
import { priceBeforeCriteria, withCriteria } from './apply-criteria';
import { NO_ADJUSTMENT } from './criteria';

const pool = new SolverPool({ size: 1 });
afterAll(() => pool.close());

function problemOf(input: unknown): AwardProblem {
	const parsed = parseProblem(input);
	if (!parsed.ok) throw new Error(parsed.problems.join('\n'));
	return parsed.problem;
}

// Two suppliers, two items. A bids 10 and 20 with a lead time of 15 days; B bids 10.10 and 20.50 with 5.
// Criterion: each day of lead time beyond 5 adds 0.2 % of the unit price → A: (15 - 5) × 0.2 = 2 %.
const asBid = () =>
	problemOf({
		currency: 'EUR',
		items: [
			{ ref: 'IT-1', quantity: 100 },
			{ ref: 'IT-2', quantity: 200 }
		],
		suppliers: [{ ref: 'A' }, { ref: 'B' }],
		bids: [
			{ supplier: 'A', item: 'IT-1', unitPrice: 10 },
			{ supplier: 'A', item: 'IT-2', unitPrice: 20 },
			{ supplier: 'B', item: 'IT-1', unitPrice: 10.1 },
			{ supplier: 'B', item: 'IT-2', unitPrice: 20.5 }
		]
	});
const twoPercentOnA = new Map([
	['A', { percentOfPrice: 2, perUnit: 0, perSupplier: 0 }],
	['B', NO_ADJUSTMENT]
]);

describe('the evaluated cost in the award problem', () => {
	it('leaves a problem without adjustments exactly as it is (same object, same hash)', () => {
		const problem = asBid();
		expect(withCriteria(problem, new Map(), () => 0)).toBe(problem);
		expect(withCriteria(problem, new Map([['A', NO_ADJUSTMENT]]), () => 0)).toBe(problem);
	});

	it('adds the percentage to the price as bid, not to the freight added to it, and keeps the price before', () => {
		// IT-1 carries a landed adder of 1 per unit (freight), so A's landed price is 11:
		// evaluated = 10 × 1.02 + 1 = 11.2 (not 11 × 1.02 = 11.22). A break at 9 (landed 10): 9 × 1.02 + 1 = 10.18.
		const landed = problemOf({
			...asBid(),
			bids: [
				{ supplier: 'A', item: 'IT-1', unitPrice: 11, priceBreaks: [{ fromQuantity: 50, unitPrice: 10 }] }
			]
		});
		const adjusted = withCriteria(landed, twoPercentOnA, (item) => (item === 'IT-1' ? 1 : 0));
		expect(adjusted.bids[0]).toEqual({
			supplier: 'A',
			item: 'IT-1',
			unitPrice: 11.2,
			priceBeforeCriteria: 11,
			priceBreaks: [{ fromQuantity: 50, unitPrice: 10.18, priceBeforeCriteria: 10 }]
		});
		expect(parseProblem(adjusted).ok).toBe(true);
	});

	it('adds an amount per unit to a bundle over its units and turns an amount per supplier into its fixed cost', () => {
		// Bundle of 100 + 200 = 300 units at 5,000; 0.5 per unit → 5,000 + 300 × 0.5 = 5,150. 250 once for B.
		const problem = problemOf({
			...asBid(),
			bundles: [
				{
					ref: 'B / X',
					supplier: 'B',
					price: 5000,
					items: [
						{ item: 'IT-1', quantity: 100 },
						{ item: 'IT-2', quantity: 200 }
					]
				}
			]
		});
		const adjusted = withCriteria(
			problem,
			new Map([['B', { percentOfPrice: 0, perUnit: 0.5, perSupplier: 250 }]]),
			() => 0
		);
		expect(adjusted.bundles[0]).toMatchObject({ price: 5150, priceBeforeCriteria: 5000 });
		expect(adjusted.rules).toEqual([
			{
				type: 'award_fixed_cost',
				label: 'Non-price criteria: B',
				amount: 250,
				per: 'supplier',
				who: { supplier: 'B' }
			}
		]);
		expect(parseProblem(adjusted).ok).toBe(true);
	});

	it('changes the award exactly as computed by hand', async () => {
		// Without criteria A is cheaper on both items: IT-1 10 < 10.10, IT-2 20 < 20.50; total
		// 100 × 10 + 200 × 20 = 5,000.
		const plain = await solveAward(asBid(), pool);
		expect(plain.awards.map((l) => [l.supplier, l.item])).toEqual([
			['A', 'IT-1'],
			['A', 'IT-2']
		]);
		expect(plain.totalCost).toBe(5000);
		// With A's 2 %: IT-1 A 10 × 1.02 = 10.20 > B 10.10 → B; IT-2 A 20 × 1.02 = 20.40 < B 20.50 → A.
		// Evaluated total 100 × 10.10 + 200 × 20.40 = 1,010 + 4,080 = 5,090; price 1,010 + 4,000 = 5,010.
		const problem = withCriteria(asBid(), twoPercentOnA, () => 0);
		const evaluated = await solveAward(problem, pool);
		expect(evaluated.awards.map((l) => [l.supplier, l.item, l.unitPrice])).toEqual([
			['B', 'IT-1', 10.1],
			['A', 'IT-2', 20.4]
		]);
		expect(evaluated.totalCost).toBeCloseTo(5090, 6);
		const price = evaluated.awards.reduce((t, l) => t + priceBeforeCriteria(problem, l), 0);
		expect(price).toBeCloseTo(5010, 6);
	});

	it('counts a supplier’s own fixed cost only when it is awarded something', async () => {
		// 20 once for A: A still wins IT-1 and IT-2 in the plain case? A: 5,000 + 20 = 5,020; B on both:
		// 100 × 10.10 + 200 × 20.50 = 5,110; so A keeps both, and the total is 5,020.
		const problem = withCriteria(
			asBid(),
			new Map([['A', { percentOfPrice: 0, perUnit: 0, perSupplier: 20 }]]),
			() => 0
		);
		const result = await solveAward(problem, pool);
		expect(result.totalCost).toBeCloseTo(5020, 6);
		// 200 once for A: mixes cost at least 200 + B's part; B alone costs 5,110 < 5,000 + 200 = 5,200 → B takes both.
		const dear = withCriteria(
			asBid(),
			new Map([['A', { percentOfPrice: 0, perUnit: 0, perSupplier: 200 }]]),
			() => 0
		);
		const moved = await solveAward(dear, pool);
		expect(moved.awards.map((l) => l.supplier)).toEqual(['B', 'B']);
		expect(moved.totalCost).toBeCloseTo(5110, 6);
	});
});
