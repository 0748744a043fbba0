// Method choice where rules link items: relaxing the links finds a first award fast, and the full MIP
// starts from it (HiGHS's setSolution), so the search prunes against a good award from its first node.
// The checks are properties of the method (an award started from is never lost; the combination is never
// worse than either part), and the independent checker (check.ts) on every award; the optimum itself is
// cross-checked against glpk.js at smaller sizes in cross-check.spec.ts.
import { afterAll, describe, expect, it } from 'vitest';
import { SolverPool } from '../../runtime/pool';
import { eventBenchmarkRules, generateProblem } from '../../tools/generate';
import { solveAward } from '../engine';
import type { Progress } from '../types';
import { buildModel } from '../model';
import { LINKED_START_MIN_INTEGERS } from './choose';
import { startClock } from './clock';
import { solveLinked } from './linked';
import { integerEstimate } from './lp-guided';

const pool = new SolverPool({ size: 2 });
afterAll(() => pool.close());

// Item rules, small businesses at least 15% of the event's spend, at most 12 suppliers over the event.
const problem = generateProblem({ items: 120, suppliers: 16, seed: 7, rules: eventBenchmarkRules });

describe('a MIP started from a known award', { timeout: 120_000 }, () => {
	it('keeps at least that award when it has no time to find one of its own', async () => {
		const linked = await solveLinked(problem, pool, { gap: 1e-4 }, startClock(4));
		expect(linked.columns).not.toBeNull();
		const model = buildModel(problem);
		const started = await pool.solve(model, { timeLimit: 0.01, gap: 1e-4, start: linked.columns! });
		expect(['optimal', 'feasible']).toContain(started.status);
		expect(started.objective!).toBeLessThanOrEqual(linked.objective! * (1 + 1e-9));
	});
});

describe('rules that link items, from LINKED_START_MIN_INTEGERS integers', { timeout: 120_000 }, () => {
	it('relaxes the links first, then lets the full MIP improve the award and the bound', async () => {
		expect(integerEstimate(problem)).toBeGreaterThanOrEqual(LINKED_START_MIN_INTEGERS);
		const alone = await solveAward(problem, pool, { method: 'lagrangian', timeLimit: 5, gap: 1e-4 });
		const both = await solveAward(problem, pool, { timeLimit: 20, gap: 1e-4 });
		expect(both.violations).toEqual([]);
		expect(both.totalCost!).toBeLessThanOrEqual(alone.totalCost! * (1 + 1e-9));
		expect(both.bound!).toBeLessThanOrEqual(both.totalCost!);
		expect(both.gap!).toBeCloseTo((both.totalCost! - both.bound!) / both.totalCost!, 9);
		if (both.status === 'optimal') expect(both.gap!).toBeLessThanOrEqual(1e-4);
	});

	it('reports the best award and bound while the full MIP runs', async () => {
		const heard: Progress[] = [];
		const result = await solveAward(problem, pool, {
			timeLimit: 8,
			gap: 1e-9,
			onProgress: (p) => heard.push(p)
		});
		const awards = heard.filter((p) => p.objective !== null);
		// The relaxed links' award, then the MIP's reports (at least one a second while it runs).
		expect(awards.length).toBeGreaterThan(2);
		for (const p of awards) expect(p.bound!).toBeLessThanOrEqual(p.objective!);
		awards.slice(1).forEach((p, k) => {
			expect(p.objective!).toBeLessThanOrEqual(awards[k]!.objective!);
			expect(p.seconds).toBeGreaterThanOrEqual(awards[k]!.seconds);
		});
		expect(result.totalCost!).toBeLessThanOrEqual(awards.at(-1)!.objective! * (1 + 1e-9));
	});
});
