import { afterAll, describe, expect, it } from 'vitest';
import { FULL_MIP_MAX_INTEGERS, solveAward } from './engine';
import { benchmarkRules, generateProblem } from '../tools/generate';
import { SolverPool } from '../runtime/pool';
import { parseProblem, type AwardProblem } from './problem';

const pool = new SolverPool({ size: 2 });
afterAll(() => pool.close());

function problemOf(input: unknown): AwardProblem {
	const parsed = parseProblem(input);
	if (!parsed.ok) throw new Error(parsed.problems.join('\n'));
	return parsed.problem;
}

const twoBidders = (extra: Partial<AwardProblem> = {}) =>
	problemOf({
		currency: 'EUR',
		items: [
			{ ref: 'IT-17', quantity: 1000, baselineUnitPrice: 5 },
			{ ref: 'IT-18', quantity: 400, baselineUnitPrice: 2 }
		],
		suppliers: [{ ref: 'S1' }, { ref: 'S2' }, { ref: 'S4', capacity: 100 }],
		bids: [
			{ supplier: 'S1', item: 'IT-17', unitPrice: 4 },
			{ supplier: 'S2', item: 'IT-17', unitPrice: 4.5, maxQuantity: 250 },
			{ supplier: 'S4', item: 'IT-18', unitPrice: 1.5 },
			{ supplier: 'S1', item: 'IT-18', unitPrice: 1.9 }
		],
		...extra
	});

describe('award results', () => {
	it('reports the allocation, totals per supplier, savings against baseline and the model size', async () => {
		const result = await solveAward(twoBidders(), pool);
		expect(result.status).toBe('optimal');
		expect(result.awards).toEqual([
			{ supplier: 'S1', item: 'IT-17', quantity: 1000, unitPrice: 4, cost: 4000 },
			{ supplier: 'S1', item: 'IT-18', quantity: 300, unitPrice: 1.9, cost: 570 },
			{ supplier: 'S4', item: 'IT-18', quantity: 100, unitPrice: 1.5, cost: 150 }
		]);
		expect(result.totalCost).toBe(4720);
		expect(result.baselineCost).toBe(5800);
		expect(result.savings).toBe(1080);
		expect(result.supplierTotals).toEqual([
			{ supplier: 'S1', quantity: 1300, cost: 4570, items: 2 },
			{ supplier: 'S4', quantity: 100, cost: 150, items: 1 }
		]);
		expect(result.modelSize).toMatchObject({ integers: 0 });
		expect(result.modelSize.rows).toBeGreaterThan(0);
	});

	it('lists an item with no bid, with the reason, and leaves it out of the cover rule', async () => {
		const problem = twoBidders({ items: [...twoBidders().items, { ref: 'IT-99', quantity: 5 }] });
		const result = await solveAward(problem, pool);
		expect(result.status).toBe('optimal');
		expect(result.uncoveredItems).toEqual([{ item: 'IT-99', reason: 'no bid or bundle offers this item' }]);
	});

	it('holds a quantity fixed by hand and fills in the rest at least cost', async () => {
		// Worked by hand: 100 units, S1 at 1 and S2 at 2 a unit; S2 fixed at 30 leaves 70 to S1,
		// 70 x 1 + 30 x 2 = 130 (the unfixed optimum is 100 x 1 = 100).
		const result = await solveAward(
			problemOf({
				currency: 'EUR',
				items: [{ ref: 'A', quantity: 100 }],
				suppliers: [{ ref: 'S1' }, { ref: 'S2' }],
				bids: [
					{ supplier: 'S1', item: 'A', unitPrice: 1 },
					{ supplier: 'S2', item: 'A', unitPrice: 2 }
				],
				rules: [
					{
						type: 'fixed_quantity',
						label: 'By hand',
						scope: { item: 'A' },
						who: { supplier: 'S2' },
						quantity: 30
					}
				]
			}),
			pool
		);
		expect(result.status).toBe('optimal');
		expect(result.totalCost).toBeCloseTo(130, 9);
		expect(result.awards.map((l) => [l.supplier, l.quantity])).toEqual([
			['S1', 70],
			['S2', 30]
		]);
	});

	it('applies an all-units price break to the whole quantity once it is reached', async () => {
		const result = await solveAward(
			problemOf({
				currency: 'EUR',
				items: [{ ref: 'A', quantity: 600 }],
				suppliers: [{ ref: 'S1' }, { ref: 'S2' }],
				bids: [
					{ supplier: 'S1', item: 'A', unitPrice: 4, priceBreaks: [{ fromQuantity: 500, unitPrice: 3.5 }] },
					{ supplier: 'S2', item: 'A', unitPrice: 3.8 }
				],
				rules: [{ type: 'max_share', scope: 'each_item', who: { supplier: 'S2' }, percent: 100 }]
			}),
			pool
		);
		expect(result.awards).toEqual([{ supplier: 'S1', item: 'A', quantity: 600, unitPrice: 3.5, cost: 2100 }]);
	});

	it('prices a quantity that reaches a break at the break, even when a spend floor would rather pay more', async () => {
		// Issue 11: S1 was awarded exactly its break quantity (100) at the pre-break price (10), which keeps
		// its 55% spend floor (1,000 of 1,800), status optimal, while the checker priced it as the bid says
		// (9: 900 of 1,700 = 52.9%) and listed the floor as broken. Worked by hand: at 9 the floor cannot
		// hold with S1 on all of A, so S1 takes q < 100 at 10 and S2 the rest at 10.5; the cost
		// 10q + 10.5(100 - q) + 8·100 = 1,850 - 0.5q falls as q nears 100, so the optimum is q just below the
		// break: 1,800 plus half the margin, with the floor kept (10q / (1,850 - 0.5q) >= 55% for q >= 98.99).
		const result = await solveAward(
			problemOf({
				currency: 'EUR',
				items: [
					{ ref: 'A', quantity: 100 },
					{ ref: 'B', quantity: 100 }
				],
				suppliers: [{ ref: 'S1' }, { ref: 'S2' }],
				bids: [
					{ supplier: 'S1', item: 'A', unitPrice: 10, priceBreaks: [{ fromQuantity: 100, unitPrice: 9 }] },
					{ supplier: 'S2', item: 'A', unitPrice: 10.5 },
					{ supplier: 'S2', item: 'B', unitPrice: 8 }
				],
				rules: [{ type: 'min_share', scope: 'event', who: { supplier: 'S1' }, percent: 55, basis: 'spend' }]
			}),
			pool
		);
		expect(result.violations).toEqual([]);
		expect(result.status).toBe('optimal');
		const s1 = result.awards.find((l) => l.supplier === 'S1')!;
		expect(s1.unitPrice).toBe(10);
		expect(s1.quantity).toBeLessThan(100);
		expect(s1.quantity).toBeGreaterThan(99.99);
		expect(result.totalCost!).toBeCloseTo(1800, 3);
	});

	it('takes a bundle whole or not at all, and shows it as its items', async () => {
		const result = await solveAward(
			problemOf({
				currency: 'EUR',
				items: [
					{ ref: 'TRAY', quantity: 100, baselineUnitPrice: 3 },
					{ ref: 'LID', quantity: 100, baselineUnitPrice: 1 }
				],
				suppliers: [{ ref: 'S1' }, { ref: 'S2' }],
				bids: [
					{ supplier: 'S1', item: 'TRAY', unitPrice: 3 },
					{ supplier: 'S1', item: 'LID', unitPrice: 1 }
				],
				bundles: [
					{
						ref: 'B1',
						supplier: 'S2',
						price: 360,
						items: [
							{ item: 'TRAY', quantity: 100 },
							{ item: 'LID', quantity: 100 }
						]
					}
				]
			}),
			pool
		);
		expect(result.totalCost).toBe(360);
		expect(result.awards.map((a) => [a.item, a.quantity, a.bundle])).toEqual([
			['TRAY', 100, 'B1'],
			['LID', 100, 'B1']
		]);
		expect(result.awards.reduce((a, l) => a + l.cost, 0)).toBeCloseTo(360, 9);
	});

	it('gives names that would break an LP file no special meaning', async () => {
		const result = await solveAward(
			problemOf({
				currency: 'EUR',
				items: [
					{ ref: 'item-1', quantity: 10 },
					{ ref: 'inf', quantity: 10 },
					{ ref: '1abc', quantity: 10 }
				],
				suppliers: [{ ref: 'st' }, { ref: 'x[1]' }],
				bids: ['item-1', 'inf', '1abc'].flatMap((item, k) => [
					{ supplier: 'st', item, unitPrice: 1 + k },
					{ supplier: 'x[1]', item, unitPrice: 2 }
				])
			}),
			pool
		);
		expect(result.status).toBe('optimal');
		expect(result.totalCost).toBe(10 * 1 + 10 * 2 + 10 * 2);
	});
});

describe('rule costs', () => {
	it('are real solves, never negative for restricting rules, added in the rules order with a running total', async () => {
		const problem = generateProblem({ items: 8, suppliers: 4, seed: 77, lots: 2, capacity: false });
		problem.rules = [
			{ type: 'max_share', scope: 'each_item', who: 'each_supplier', percent: 70, label: 'Cap 70%' },
			{ type: 'supplier_count', scope: 'each_item', max: 2, label: 'At most two' },
			{ type: 'award_fixed_cost', amount: 300, per: 'supplier', label: 'Cost per contract' },
			// Binds nothing: every item's lowest bid already keeps it (a cap of 100%).
			{ type: 'max_share', scope: 'each_item', who: 'each_supplier', percent: 100, label: 'Cap 100%' }
		];
		const result = await solveAward(problem, pool, { explain: true });
		expect(result.status).toBe('optimal');
		const costs = result.ruleCosts!;
		expect(costs).toHaveLength(4);
		expect(costs[0]!.label).toBe('Cap 70%');
		for (const cost of costs) {
			// A restricting rule never costs less than nothing: a difference within the stated tolerance is 0.
			expect(cost.tolerance!).toBeGreaterThan(0);
			expect(cost.tolerance!).toBeLessThan(1e-3 * result.totalCost!);
			expect(cost.cost!).toBeGreaterThanOrEqual(0);
			expect(cost.costOnTopOfEarlier!).toBeGreaterThanOrEqual(0);
		}
		// The rule that binds nothing costs exactly 0, alone and on top of the others.
		expect([costs[3]!.cost, costs[3]!.costOnTopOfEarlier]).toEqual([0, 0]);
		// The running total adds up the steps, and the last one is what all the rules cost together.
		let sum = 0;
		for (const cost of costs) {
			sum += cost.costOnTopOfEarlier!;
			expect(Math.abs(cost.runningTotal! - sum)).toBeLessThanOrEqual(cost.tolerance! * 3);
		}
		const noRules = await solveAward({ ...problem, rules: [] }, pool);
		expect(
			Math.abs(costs.at(-1)!.runningTotal! - (result.totalCost! - noRules.totalCost!))
		).toBeLessThanOrEqual(costs.at(-1)!.tolerance!);
	});
});

describe('conflicts', () => {
	it('names the share cap that must rise, and by how much, when the rules cannot all hold', async () => {
		const problem = twoBidders({
			rules: [{ type: 'max_share', scope: 'each_item', who: 'each_supplier', percent: 60, label: 'Cap 60%' }]
		});
		const result = await solveAward(problem, pool, { explain: true });
		expect(result.status).toBe('infeasible');
		// S2 can supply only 250 of 1000, so S1 needs 750: 75%
		expect(result.conflicts!.map((c) => c.text)).toContain(
			'the 60% share cap on IT-17 (Cap 60%) must rise to 75%'
		);
	});

	it('names a capacity that is short', async () => {
		const problem = twoBidders({
			bids: twoBidders().bids.filter((b) => !(b.supplier === 'S1' && b.item === 'IT-18'))
		});
		const result = await solveAward(problem, pool, { explain: true });
		expect(result.status).toBe('infeasible');
		expect(result.conflicts!.map((c) => c.text)).toContain("S4's capacity is 300 short");
	});
});

describe('sensitivity', () => {
	it('says below which price a losing bid would start to win', async () => {
		const result = await solveAward(twoBidders(), pool, { explain: true });
		const losing = result.sensitivity!.losingBids.find((b) => b.supplier === 'S2');
		expect(result.sensitivity!.local).toBe(false);
		expect(losing).toMatchObject({ item: 'IT-17', unitPrice: 4.5, winsBelow: 4 });
		expect(losing!.text).toBe('S2 would start to win IT-17 below 4.00 EUR');
	});

	it('flags shadow prices of a MIP as local', async () => {
		const problem = twoBidders({ rules: [{ type: 'supplier_count', scope: 'each_item', max: 1 }] });
		const result = await solveAward(problem, pool, { explain: true });
		expect(result.method).not.toBe('lp');
		expect(result.sensitivity!.local).toBe(true);
	});
});

describe('shadow prices', () => {
	it('equal the change of the optimum when a binding capacity moves by one (LP duality)', async () => {
		const problem = generateProblem({ items: 30, suppliers: 6, seed: 11, bidShare: 1 });
		// the two biggest winners get 80% of what they win without a capacity: both bind
		const free = await solveAward(problem, pool);
		for (const total of free.supplierTotals.slice(0, 2)) {
			problem.suppliers.find((s) => s.ref === total.supplier)!.capacity = Math.floor(total.quantity * 0.8);
		}
		const base = await solveAward(problem, pool, { explain: true });
		expect(base.status).toBe('optimal');
		const binding = base.sensitivity!.capacityPrices.filter((p) => p.valuePerUnit > 1e-9);
		expect(binding.length).toBeGreaterThan(0);
		for (const price of binding) {
			const more = structuredClone(problem);
			more.suppliers.find((s) => s.ref === price.supplier)!.capacity! += 1;
			const after = await solveAward(more, pool);
			expect(base.totalCost! - after.totalCost!).toBeCloseTo(price.valuePerUnit, 6);
		}
	});
});

describe('decomposition', () => {
	it('gives the same optimum split into independent item groups as solved whole', async () => {
		for (const seed of [5, 6, 7, 8]) {
			const problem = generateProblem({
				items: 12,
				suppliers: 5,
				seed,
				lots: 3,
				priceBreaks: true,
				capacity: false
			});
			problem.rules = [
				{ type: 'min_award', scope: 'each_item', who: 'each_supplier', percentOfItem: 20 },
				{ type: 'supplier_count', scope: 'each_item', max: 2 }
			];
			const whole = await solveAward(problem, pool, { method: 'monolithic', gap: 1e-9 });
			const split = await solveAward(problem, pool, { method: 'decomposed', gap: 1e-9 });
			expect(split.method).toBe('decomposed');
			expect(whole.method).toBe('mip');
			expect(split.totalCost!).toBeCloseTo(whole.totalCost!, 6);
			expect(split.violations).toEqual([]);
		}
	});
});

describe('the LP-guided method for large models', () => {
	it('keeps every rule and proves its gap against a valid lower bound, agreeing with the full MIP', async () => {
		const problem = generateProblem({
			items: 120,
			suppliers: 8,
			seed: 21,
			capacity: true,
			rules: benchmarkRules
		});
		const full = await solveAward(problem, pool, { method: 'monolithic', gap: 1e-6 });
		const guided = await solveAward(problem, pool, { method: 'lp_guided', gap: 1e-6 });
		expect(full.status).toBe('optimal');
		expect(guided.method).toBe('lp_guided');
		expect(guided.violations).toEqual([]);
		// a lower bound never exceeds a feasible cost, and each method's answer lies within its own gap
		expect(guided.bound!).toBeLessThanOrEqual(full.totalCost! * (1 + 1e-9));
		expect(full.bound!).toBeLessThanOrEqual(guided.totalCost! * (1 + 1e-9));
		expect(guided.gap!).toBeGreaterThanOrEqual(0);
		expect((guided.totalCost! - guided.bound!) / guided.totalCost!).toBeCloseTo(guided.gap!, 9);
	});

	it('never awards a quantity the MIP solver let through a tier it switched off', async () => {
		// Found on this seeded event: HiGHS accepts a yes/no column within 1e-6 of 0 as 0, and x <= M·z let
		// 2.6e-6 units of IT-228 through on S24's price-break tier with z "0": an award at a price the bid
		// does not give, a fourth supplier on an item capped at three, under the minimum award.
		const base = generateProblem({
			items: 300,
			suppliers: 25,
			seed: 14,
			capacity: true,
			priceBreaks: true,
			bundles: 3,
			rules: benchmarkRules
		});
		const problem = {
			...base,
			suppliers: base.suppliers.map((s) => ({ ...s, capacity: Math.round(s.capacity! * 0.6) }))
		};
		const result = await solveAward(problem, pool, { method: 'lp_guided' });
		expect(result.violations).toEqual([]);
		expect(result.status).toBe('optimal');
	});

	it('is chosen by default above the full-MIP size', async () => {
		const problem = generateProblem({
			items: 600,
			suppliers: 16,
			seed: 2,
			capacity: true,
			rules: benchmarkRules
		});
		const result = await solveAward(problem, pool, { gap: 1e-4 });
		expect(result.modelSize.integers).toBeGreaterThan(FULL_MIP_MAX_INTEGERS);
		expect(result.method).toBe('lp_guided');
		expect(result.violations).toEqual([]);
		expect(result.gap!).toBeLessThanOrEqual(1e-3);
	});
});
