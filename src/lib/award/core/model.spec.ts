// The model buildModel writes, pinned: its size, a fingerprint of every array and meaning (so splitting
// the builder into one function per constraint family changed no row, column or coefficient, nor their
// order), and its optimum on problems whose optimum an outside source gives.
import { createHash } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import { InProcessSolver } from '../runtime/highs-instance';
import { crossCheckCases, generateProblem, lotBenchmarkRules } from '../tools/generate';
import { dantzig } from '../tools/published-examples';
import { buildModel, type AwardModel } from './model';
import { parseProblem, type AwardProblem } from './problem';

const solver = new InProcessSolver();

function fingerprint(model: AwardModel): string {
	const hash = createHash('sha256');
	const arrays = [
		model.colCost,
		model.colLower,
		model.colUpper,
		model.integrality,
		model.rowLower,
		model.rowUpper,
		model.starts,
		model.indices,
		model.values
	];
	for (const a of arrays) hash.update(new Uint8Array(a.buffer, a.byteOffset, a.byteLength));
	hash.update(JSON.stringify([model.columns, model.rows, model.uncovered, model.elastic, model.integers]));
	return hash.digest('hex').slice(0, 16);
}

const size = (model: AwardModel) => [model.numRows, model.numCols, model.integers, model.indices.length];

function parsed(input: unknown): AwardProblem {
	const result = parseProblem(input);
	if (!result.ok) throw new Error(result.problems.join('\n'));
	return result.problem;
}

const seeded = new Map(crossCheckCases().map((c) => [c.seed, c.problem]));

// Fingerprints and sizes recorded from the single-function buildModel before the split (commit
// a805756); `elastic` is the feasibility relaxation, `without` the model without rules 0 and 2. The
// seeded cases with price breaks were recorded again when a tier came to end just below the next break
// (model-families.ts, breakMargin): only those tiers' upper bounds changed, the optima below still hold.
// Optima: glpk.js (GLP_OPT, mipgap 0) on the separate formulation of cross-check.spec.ts, and
// Dantzig 1963, sec. 3.3 for the transport example; "infeasible" where glpk.js reports GLP_NOFEAS.
const pinned: {
	name: string;
	problem: () => AwardProblem;
	size: number[];
	model: string;
	elastic: string;
	without: string;
	optimum: number | 'infeasible';
}[] = [
	{
		name: 'Dantzig transport (LP, capacities)',
		problem: () => parsed(dantzig),
		size: [5, 6, 0, 12],
		model: '8e90e50e9992e75b',
		elastic: '59a1262eb65bb8a3',
		without: '8e90e50e9992e75b',
		optimum: 153.675 // Dantzig 1963, sec. 3.3
	},
	{
		name: 'seed 1002: share caps and floors, minimum award, supplier counts, exclusion, capacities',
		problem: () => seeded.get(1002)!,
		size: [165, 77, 44, 466],
		model: '68408a51c4e08e5c',
		elastic: '2271395beb375ea1',
		without: '462919d8473e5104',
		optimum: 92237.704 // glpk.js on the cross-check formulation
	},
	{
		name: 'seed 1004: spend cap, supplier count, exclusion, capacities',
		problem: () => seeded.get(1004)!,
		size: [67, 41, 23, 177],
		model: '2911d081d31a8b59',
		elastic: '1ea7a56ebb69e397',
		without: '7007b401495be395',
		optimum: 78357.07010733453 // glpk.js on the cross-check formulation
	},
	{
		name: 'seed 1009: a bundle, supplier count, exclusion',
		problem: () => seeded.get(1009)!,
		size: [60, 37, 21, 145],
		model: '02b21fcb27d1549c',
		elastic: '4797cb085dd9ec16',
		without: 'e4760632b423fde9',
		optimum: 102460.79 // glpk.js on the cross-check formulation
	},
	{
		name: 'seed 1010: fixed cost per supplier and item, spend share cap and floor, spend cap',
		problem: () => seeded.get(1010)!,
		size: [77, 55, 29, 219],
		model: '944ae0530b4a8b74',
		elastic: '158f667ffa026526',
		without: '9b5126da139cd896',
		optimum: 106501.72669981238 // glpk.js on the cross-check formulation
	},
	{
		name: 'seed 1023: minimum award, supplier counts over the event, fixed cost per supplier',
		problem: () => seeded.get(1023)!,
		size: [142, 66, 37, 341],
		model: '381d377600e7fe27',
		elastic: '9bf0af7df16522c2',
		without: 'b3aeb7d78c98ae51',
		optimum: 196869.731204716 // glpk.js on the cross-check formulation
	},
	{
		name: 'seed 1000: a bundle, fixed cost per supplier, rules that cannot all hold',
		problem: () => seeded.get(1000)!,
		size: [66, 31, 19, 173],
		model: 'd94489fb4b03046c',
		elastic: '0301ac5f22fc6957',
		without: '18b56784e4a5e59f',
		optimum: 'infeasible' // glpk.js: GLP_NOFEAS
	}
];

describe('the award model', () => {
	it.each(pinned)('is the same model as before the split, with the known optimum: $name', async (pin) => {
		const problem = pin.problem();
		const model = buildModel(problem);
		expect(size(model)).toEqual(pin.size);
		expect(fingerprint(model)).toBe(pin.model);
		expect(fingerprint(buildModel(problem, { elastic: true }))).toBe(pin.elastic);
		expect(fingerprint(buildModel(problem, { withoutRules: new Set([0, 2]) }))).toBe(pin.without);
		const outcome = await solver.solve(model, { gap: 1e-9 });
		if (pin.optimum === 'infeasible') {
			expect(outcome.status).toBe('infeasible');
			return;
		}
		expect(outcome.status).toBe('optimal');
		expect(Math.abs(outcome.objective! - pin.optimum) / pin.optimum).toBeLessThan(1e-6);
	});
});

describe('spend shares of each supplier over a lot', () => {
	it("write the lot's spend once, not once per supplier", () => {
		// 400 items in 4 lots, 20 suppliers, each bidding on about 70% of the items: at most 70% of each
		// lot's spend to one supplier. Written per supplier, each of the 20 rows of a lot repeats every bid
		// of the lot (about 20 x 1,400 entries a lot); with the lot's total as a column, each bid enters its
		// own supplier's row and the total's row once.
		const problem = generateProblem({ items: 400, suppliers: 20, seed: 3, lots: 4 });
		const bids = problem.bids.length;
		const withRule = buildModel({
			...problem,
			rules: lotBenchmarkRules(4).filter((r) => r.type === 'max_share' && r.scope !== 'each_item')
		});
		const without = buildModel(problem);
		const added = withRule.indices.length - without.indices.length;
		expect(added).toBeLessThanOrEqual(2 * bids + 4 * 21);
		expect(withRule.columns.filter((c) => c.kind === 'spend_total')).toHaveLength(4);
	});
});
