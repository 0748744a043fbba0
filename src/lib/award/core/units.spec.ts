// Whole units and pack sizes. Every expected figure below is worked by hand in the comment beside it;
// the cross-check against glpk.js with integer quantities is in cross-check.spec.ts.
import { afterAll, describe, expect, it } from 'vitest';
import { checkAllocation } from './check';
import { solveAward } from './engine';
import { parseProblem, type AwardProblem } from './problem';
import { SolverPool } from '../runtime/pool';
import type { Solver } from './solver';
import { commonMultiple, countedWhole, mostOfItem, stepOf } from './units';
import { seededRandom } from '../tools/generate';

const pool = new SolverPool({ size: 2 });
afterAll(() => pool.close());

function problemOf(input: unknown): AwardProblem {
	const parsed = parseProblem(input);
	if (!parsed.ok) throw new Error(parsed.problems.join('\n'));
	return parsed.problem;
}

describe('which items are counted in whole units', () => {
	it('counts the UN/CEFACT Recommendation 20 counting codes and package types, and measures the rest', () => {
		for (const unit of ['C62', 'H87', 'EA', 'PR', 'SET', 'DZN', 'XBX', 'XPX'])
			expect(countedWhole({ unit }), unit).toBe(true);
		for (const unit of ['KGM', 'LTR', 'MTR', 'MTK', 'HUR', 'KWH', 'TNE'])
			expect(countedWhole({ unit }), unit).toBe(false);
		expect(countedWhole({})).toBe(false);
	});

	it('lets an item say it outright, over its unit code', () => {
		expect(countedWhole({ unit: 'C62', wholeUnits: false })).toBe(false);
		expect(countedWhole({ unit: 'KGM', wholeUnits: true })).toBe(true);
	});

	it('steps a bid in the least common multiple of the order multiple and the pack size', () => {
		expect(commonMultiple(4, 6)).toBe(12);
		expect(commonMultiple(12, 6)).toBe(12);
		expect(commonMultiple(0.25, 1)).toBe(1);
		expect(commonMultiple(0.3, 0.2)).toBeCloseTo(0.6, 12);
		expect(stepOf({ unit: 'C62' }, {})).toBe(1);
		expect(stepOf({ unit: 'KGM' }, {})).toBe(0);
		expect(stepOf({ unit: 'KGM' }, { packSize: 25 })).toBe(25);
		expect(stepOf({ unit: 'C62', orderMultiple: 4 }, { packSize: 6 })).toBe(12);
	});

	it('lets the cover round up by less than the largest step', () => {
		// 1,000 pieces from bids in 12s: at most 1,000 + 12 - 1 = 1,011 (84 packs are 1,008).
		expect(mostOfItem({ ref: 'A', quantity: 1000, unit: 'C62' }, 12)).toBe(1011);
		expect(mostOfItem({ ref: 'A', quantity: 1000, unit: 'C62' }, 1)).toBe(1000);
		expect(mostOfItem({ ref: 'A', quantity: 100.5, unit: 'KGM' }, 25)).toBe(125.5);
		expect(mostOfItem({ ref: 'A', quantity: 100.5, unit: 'KGM' }, 0)).toBe(100.5);
	});
});

describe('problems in whole units are checked before they are solved', () => {
	it('names a part quantity, order multiple, pack size or bundle line of a counted item', () => {
		const parsed = parseProblem({
			currency: 'EUR',
			items: [
				{ ref: 'IT-1', quantity: 10.5, unit: 'C62', orderMultiple: 2.5 },
				{ ref: 'IT-2', quantity: 10, wholeUnits: true }
			],
			suppliers: [{ ref: 'S1' }],
			bids: [
				{ supplier: 'S1', item: 'IT-1', unitPrice: 1, packSize: 1.5 },
				{ supplier: 'S1', item: 'IT-2', unitPrice: 1 }
			],
			bundles: [{ ref: 'B1', supplier: 'S1', price: 5, items: [{ item: 'IT-2', quantity: 2.5 }] }]
		});
		expect(parsed.ok).toBe(false);
		expect(parsed.ok ? [] : parsed.problems).toEqual([
			'items[0].quantity: 10.5 is not a whole number, and IT-1 is counted in whole units (C62); wholeUnits: false allows parts',
			'items[0].orderMultiple: 2.5 is not a whole number, and IT-1 is counted in whole units (C62); wholeUnits: false allows parts',
			'bids[0].packSize: 1.5 is not a whole number, and IT-1 is counted in whole units (C62); wholeUnits: false allows parts',
			'bundles[0].items[0].quantity: 2.5 is not a whole number, and IT-2 is counted in whole units; wholeUnits: false allows parts'
		]);
	});

	it('accepts parts of a measured item and of a counted item that allows them', () => {
		const parsed = parseProblem({
			currency: 'EUR',
			items: [
				{ ref: 'IT-1', quantity: 10.5, unit: 'KGM', orderMultiple: 0.25 },
				{ ref: 'IT-2', quantity: 7.5, unit: 'C62', wholeUnits: false }
			],
			suppliers: [{ ref: 'S1' }],
			bids: [
				{ supplier: 'S1', item: 'IT-1', unitPrice: 1, packSize: 0.5 },
				{ supplier: 'S1', item: 'IT-2', unitPrice: 1 }
			]
		});
		expect(parsed.ok).toBe(true);
	});
});

describe('awards in whole units and packs (worked by hand)', () => {
	it('keeps a share cap to whole units', async () => {
		// 101 pieces, S1 at 1.00 and S2 at 2.00, each at most 60%: 60% of 101 is 60.6, so S1 gets 60 and
		// S2 41: 60 x 1.00 + 41 x 2.00 = 142.00 (in parts it would be 60.6 + 40.4 x 2 = 141.40).
		const problem = problemOf({
			currency: 'EUR',
			items: [{ ref: 'IT-1', quantity: 101, unit: 'C62' }],
			suppliers: [{ ref: 'S1' }, { ref: 'S2' }],
			bids: [
				{ supplier: 'S1', item: 'IT-1', unitPrice: 1 },
				{ supplier: 'S2', item: 'IT-1', unitPrice: 2 }
			],
			rules: [
				{ type: 'max_share', scope: 'each_item', who: 'each_supplier', percent: 60, label: 'At most 60%' }
			]
		});
		const result = await solveAward(problem, pool, { explain: true });
		expect(result.status).toBe('optimal');
		expect(result.awards.map((l) => [l.supplier, l.quantity])).toEqual([
			['S1', 60],
			['S2', 41]
		]);
		expect(result.totalCost).toBeCloseTo(142, 9);
		expect(result.violations).toEqual([]);
		// Without the cap S1 takes all 101 for 101.00: the cap costs 41.00.
		expect(result.ruleCosts?.[0]?.cost).toBeCloseTo(41, 6);
		const measured = await solveAward(
			{ ...problem, items: [{ ...problem.items[0]!, wholeUnits: false }] },
			pool
		);
		expect(measured.totalCost).toBeCloseTo(141.4, 9);
	});

	it('fills a demand from packs and single units at least cost', async () => {
		// 1,000 pieces; S1 sells packs of 12 at 1.00 a piece, S2 single pieces at 1.10. 83 packs (996) and
		// 4 single pieces: 996.00 + 4.40 = 1,000.40, less than 84 packs (1,008.00) from S1 alone.
		const problem = problemOf({
			currency: 'EUR',
			items: [{ ref: 'IT-1', quantity: 1000, unit: 'C62' }],
			suppliers: [{ ref: 'S1' }, { ref: 'S2' }],
			bids: [
				{ supplier: 'S1', item: 'IT-1', unitPrice: 1, packSize: 12 },
				{ supplier: 'S2', item: 'IT-1', unitPrice: 1.1 }
			]
		});
		const result = await solveAward(problem, pool);
		expect(result.status).toBe('optimal');
		expect(result.awards.map((l) => [l.supplier, l.quantity])).toEqual([
			['S1', 996],
			['S2', 4]
		]);
		expect(result.totalCost).toBeCloseTo(1000.4, 9);
	});

	it('rounds up to whole packs when nobody sells less, and says so in the cover', async () => {
		// 1,000 pieces from packs of 12 only: 84 packs, 1,008 pieces, 1,008.00.
		const problem = problemOf({
			currency: 'EUR',
			items: [{ ref: 'IT-1', quantity: 1000, unit: 'C62' }],
			suppliers: [{ ref: 'S1' }],
			bids: [{ supplier: 'S1', item: 'IT-1', unitPrice: 1, packSize: 12 }]
		});
		const result = await solveAward(problem, pool);
		expect(result.awards.map((l) => [l.supplier, l.quantity])).toEqual([['S1', 1008]]);
		expect(result.totalCost).toBeCloseTo(1008, 9);
		expect(result.violations).toEqual([]);
	});

	it('reaches a price break by rounding up to the pack, priced as the bid says', async () => {
		// 115 pieces, packs of 12, 1.00 a piece, 0.90 from 120: 10 packs (120) at 0.90 = 108.00, less
		// than the 115 in parts would cost; 9 packs (108) are too few.
		const problem = problemOf({
			currency: 'EUR',
			items: [{ ref: 'IT-1', quantity: 115, unit: 'C62' }],
			suppliers: [{ ref: 'S1' }],
			bids: [
				{
					supplier: 'S1',
					item: 'IT-1',
					unitPrice: 1,
					packSize: 12,
					priceBreaks: [{ fromQuantity: 120, unitPrice: 0.9 }]
				}
			]
		});
		const result = await solveAward(problem, pool);
		expect(result.awards).toEqual([
			{ supplier: 'S1', item: 'IT-1', quantity: 120, unitPrice: 0.9, cost: 108 }
		]);
		expect(result.violations).toEqual([]);
	});

	it('moves in the common multiple of the order multiple and the pack, within the bid’s maximum', async () => {
		// Ordered in 4s, sold in 6s: steps of 12. S1 (0.50) may supply at most 100: 8 steps, 96. S2 (0.80,
		// single pieces, but the order multiple of 4) the other 4: 48.00 + 3.20 = 51.20.
		const problem = problemOf({
			currency: 'EUR',
			items: [{ ref: 'IT-1', quantity: 100, unit: 'H87', orderMultiple: 4 }],
			suppliers: [{ ref: 'S1' }, { ref: 'S2' }],
			bids: [
				{ supplier: 'S1', item: 'IT-1', unitPrice: 0.5, packSize: 6, maxQuantity: 100 },
				{ supplier: 'S2', item: 'IT-1', unitPrice: 0.8 }
			]
		});
		const result = await solveAward(problem, pool);
		expect(result.awards.map((l) => [l.supplier, l.quantity])).toEqual([
			['S1', 96],
			['S2', 4]
		]);
		expect(result.totalCost).toBeCloseTo(51.2, 9);
	});

	it('keeps a measured item in parts', async () => {
		// 10.5 kg, S1 at 2.00 at most 60%: 6.3 kg, S2 at 3.00 the other 4.2 kg: 12.60 + 12.60 = 25.20.
		const result = await solveAward(
			problemOf({
				currency: 'EUR',
				items: [{ ref: 'IT-1', quantity: 10.5, unit: 'KGM' }],
				suppliers: [{ ref: 'S1' }, { ref: 'S2' }],
				bids: [
					{ supplier: 'S1', item: 'IT-1', unitPrice: 2 },
					{ supplier: 'S2', item: 'IT-1', unitPrice: 3 }
				],
				rules: [{ type: 'max_share', scope: { item: 'IT-1' }, who: { supplier: 'S1' }, percent: 60 }]
			}),
			pool
		);
		expect(result.awards.map((l) => l.quantity)).toEqual([6.3, 4.2]);
		expect(result.totalCost).toBeCloseTo(25.2, 9);
	});
});

describe('the checker and whole units', () => {
	const problem = problemOf({
		currency: 'EUR',
		items: [{ ref: 'IT-1', quantity: 4000, unit: 'C62' }],
		suppliers: [{ ref: 'S1' }, { ref: 'S2' }],
		bids: [
			{ supplier: 'S1', item: 'IT-1', unitPrice: 1, packSize: 10 },
			{ supplier: 'S2', item: 'IT-1', unitPrice: 1 }
		]
	});
	const line = (supplier: string, quantity: number) => ({
		supplier,
		item: 'IT-1',
		quantity,
		unitPrice: 1,
		cost: quantity
	});

	it('finds a case count in parts, and a quantity off its pack', () => {
		expect(
			checkAllocation(problem, [line('S2', 3643.482488123), line('S1', 356.517511877)], new Set())
		).toEqual([
			'S2 gets 3643.482488123 of IT-1, not a whole number of units',
			'S1 gets 356.517511877 of IT-1, not a multiple of 10'
		]);
	});

	it('accepts a cover rounded up by less than a pack, and not by a whole pack', () => {
		expect(checkAllocation(problem, [line('S1', 4000)], new Set())).toEqual([]);
		expect(
			checkAllocation(
				{ ...problem, items: [{ ...problem.items[0]!, quantity: 3995 }] },
				[line('S1', 4000)],
				new Set()
			)
		).toEqual([]);
		expect(checkAllocation(problem, [line('S1', 4010)], new Set())).toEqual([
			'IT-1 is covered for 4010 of 4000 (up to 4009 in whole steps)'
		]);
	});
});

describe('whole units on the LP-guided path', () => {
	it('repairs the items the LP split into parts, and its bound stays below the full MIP’s optimum', async () => {
		// 30 counted items of odd quantities, five suppliers bidding on each, every fourth bid in packs of
		// 6, each supplier able to take 30% of all units, and at most 70% of an item each: the LP splits
		// items into parts, which the repair must make whole.
		const random = seededRandom(77);
		const items = Array.from({ length: 30 }, (_, k) => ({
			ref: `IT-${k + 1}`,
			quantity: 2 * Math.floor(50 + random() * 450) + 1,
			unit: 'C62'
		}));
		const total = items.reduce((a, i) => a + i.quantity, 0);
		const suppliers = ['S1', 'S2', 'S3', 'S4', 'S5'].map((ref) => ({
			ref,
			capacity: Math.round(0.3 * total)
		}));
		let n = 0;
		const bids = items.flatMap((item) => {
			const price = 1 + random() * 9;
			return suppliers.map((s) => ({
				supplier: s.ref,
				item: item.ref,
				unitPrice: Math.round(price * (0.8 + random() * 0.4) * 100) / 100,
				...(n++ % 4 === 0 ? { packSize: 6 } : {})
			}));
		});
		const problem = problemOf({
			currency: 'EUR',
			items,
			suppliers,
			bids,
			rules: [{ type: 'max_share', scope: 'each_item', who: 'each_supplier', percent: 70 }]
		});
		// Measured, the same problem's optimum has parts of items and quantities off the packs.
		const measured = await solveAward(
			{
				...problem,
				items: problem.items.map((i) => ({ ...i, wholeUnits: false })),
				bids: problem.bids.map(({ packSize: _pack, ...b }) => b)
			},
			pool
		);
		const packed = new Set(problem.bids.filter((b) => b.packSize).map((b) => `${b.supplier}|${b.item}`));
		const offStep = (l: { supplier: string; item: string; quantity: number }) =>
			!Number.isInteger(l.quantity / (packed.has(`${l.supplier}|${l.item}`) ? 6 : 1));
		expect(measured.awards.filter(offStep).length).toBeGreaterThan(3);
		const guided = await solveAward(problem, pool, { method: 'lp_guided', gap: 1e-9 });
		const full = await solveAward(problem, pool, { method: 'monolithic', gap: 1e-9 });
		expect(full.status).toBe('optimal');
		expect(guided.method).toBe('lp_guided');
		expect(guided.violations).toEqual([]);
		expect(guided.awards.filter(offStep)).toEqual([]);
		// The guided award is never cheaper than the optimum, and its bound never above it.
		expect(guided.totalCost!).toBeGreaterThanOrEqual(full.totalCost! - 1e-6 * full.totalCost!);
		expect(guided.bound!).toBeLessThanOrEqual(full.totalCost! + 1e-6 * full.totalCost!);
	});
});

describe('quantities in steps are solved free first', () => {
	// A solver that counts the models it is given and whether they had integer quantities.
	const counting = () => {
		const seen: { steppedIntegers: number }[] = [];
		const solver: Solver = {
			solve: (model, options) => {
				seen.push({
					steppedIntegers: model.columns.filter((c, j) => c.kind === 'tier' && model.integrality[j]).length
				});
				return pool.solve(model, options);
			}
		};
		return { solver, seen };
	};
	const pieces = (quantity: number) =>
		problemOf({
			currency: 'EUR',
			items: [{ ref: 'IT-1', quantity, unit: 'C62' }],
			suppliers: [{ ref: 'S1' }, { ref: 'S2' }],
			bids: [
				{ supplier: 'S1', item: 'IT-1', unitPrice: 1 },
				{ supplier: 'S2', item: 'IT-1', unitPrice: 2 }
			],
			rules: [{ type: 'max_share', scope: 'each_item', who: 'each_supplier', percent: 60 }]
		});

	it('keeps the free answer when it is whole already: one solve', async () => {
		// 60% of 100 is 60: the answer in parts is 60 + 40, whole.
		const { solver, seen } = counting();
		const result = await solveAward(pieces(100), solver);
		expect(result.awards.map((l) => l.quantity)).toEqual([60, 40]);
		expect(seen).toEqual([{ steppedIntegers: 0 }]);
	});

	it('solves again in whole units when the free answer has parts', async () => {
		// 60% of 101 is 60.6: in parts 60.6 + 40.4, so the model in whole units is solved too (60 + 41).
		const { solver, seen } = counting();
		const result = await solveAward(pieces(101), solver);
		expect(result.awards.map((l) => l.quantity)).toEqual([60, 41]);
		expect(seen).toEqual([{ steppedIntegers: 0 }, { steppedIntegers: 2 }]);
	});
});
