// explainAward: the explanations computed later from a stored result are the ones solveAward gives
// with `explain: true`, for every kind of result (an LP, a MIP, one solved in parts or LP-guided, one
// whose rules cannot all hold), and solveAward computes none unless asked.
import { afterAll, describe, expect, it } from 'vitest';
import { SolverPool } from '../runtime/pool';
import { benchmarkRules, crossCheckCases, generateProblem } from '../tools/generate';
import { solveAward, type AwardOptions } from './engine';
import { explainAward } from './explain';
import type { AwardProblem } from './problem';

const pool = new SolverPool({ size: 2 });
afterAll(() => pool.close());

/** Numbers to 9 significant digits, so that a last-bit difference between two solves does not count. */
function rounded(value: unknown): unknown {
	if (typeof value === 'number') return Number.isFinite(value) ? Number(value.toPrecision(9)) : value;
	if (Array.isArray(value)) return value.map(rounded);
	if (value && typeof value === 'object')
		return Object.fromEntries(Object.entries(value).map(([k, v]) => [k, rounded(v)]));
	return value;
}

const seeded = new Map(crossCheckCases().map((c) => [c.seed, c.problem]));
const withRules = (problem: AwardProblem, rules: AwardProblem['rules']) => ({ ...problem, rules });

const cases: {
	name: string;
	problem: AwardProblem;
	options: AwardOptions;
	method: string;
	status: string;
}[] = [
	{
		name: 'an LP with share caps and capacities',
		problem: withRules(generateProblem({ items: 12, suppliers: 5, seed: 31, bidShare: 1, capacity: true }), [
			{ type: 'max_share', scope: 'each_item', who: 'each_supplier', percent: 70 },
			{ type: 'max_spend', scope: 'event', who: { supplier: 'S1' }, amount: 50_000 }
		]),
		options: {},
		method: 'lp',
		status: 'optimal'
	},
	{
		name: 'a MIP with price breaks, a bundle and an exclusion (cross-check seed 1009)',
		problem: seeded.get(1009)!,
		options: { method: 'monolithic', gap: 1e-9 },
		method: 'mip',
		status: 'optimal'
	},
	{
		name: 'a MIP with minimum awards, supplier counts and capacities (cross-check seed 1002)',
		problem: seeded.get(1002)!,
		options: { gap: 1e-9 },
		method: 'mip',
		status: 'optimal'
	},
	{
		name: 'independent item groups solved apart',
		problem: withRules(generateProblem({ items: 12, suppliers: 5, seed: 6, lots: 3, priceBreaks: true }), [
			{ type: 'min_award', scope: 'each_item', who: 'each_supplier', percentOfItem: 20 },
			{ type: 'supplier_count', scope: 'each_item', max: 2 }
		]),
		options: { method: 'decomposed', gap: 1e-9 },
		method: 'decomposed',
		status: 'optimal'
	},
	{
		name: 'the LP-guided method',
		problem: generateProblem({ items: 40, suppliers: 6, seed: 21, capacity: true, rules: benchmarkRules }),
		options: { method: 'lp_guided', gap: 1e-6 },
		method: 'lp_guided',
		status: 'optimal'
	},
	{
		name: 'rules that cannot all hold (cross-check seed 1000)',
		problem: seeded.get(1000)!,
		options: {},
		method: 'mip',
		status: 'infeasible'
	}
];

describe('explainAward', () => {
	it.each(cases)('gives from the stored result what explain: true gives: $name', async (c) => {
		const plain = await solveAward(c.problem, pool, c.options);
		expect(plain).toMatchObject({ method: c.method, status: c.status });
		expect(plain).not.toHaveProperty('ruleCosts');
		expect(plain).not.toHaveProperty('conflicts');
		expect(plain).not.toHaveProperty('sensitivity');
		const stored = JSON.parse(JSON.stringify(plain)) as typeof plain;
		const later = await explainAward(c.problem, stored, pool, c.options);
		const { ruleCosts, conflicts, sensitivity } = await solveAward(c.problem, pool, {
			...c.options,
			explain: true
		});
		expect(rounded(later)).toEqual(rounded({ ruleCosts, conflicts, sensitivity }));
		if (c.status === 'infeasible') expect(later.conflicts!.length).toBeGreaterThan(0);
		else {
			expect(later.ruleCosts).toHaveLength(c.problem.rules.length);
			expect(later.sensitivity!.local).toBe(c.method !== 'lp');
			expect(later.sensitivity!.coverPrices.length).toBeGreaterThan(0);
		}
	});
});
