// Sub-models of the relaxed-links method: the columns left free, every other held. The check values are
// counted from the model itself (rows of each kind), and the sub-model's answer is checked against the
// rows of the whole model.
import { afterAll, describe, expect, it } from 'vitest';
import { SolverPool } from '../../runtime/pool';
import { eventBenchmarkRules, generateProblem } from '../../tools/generate';
import { buildModel } from '../model';
import { blocksOf, LINKING, rowActivities, rowExcess, subModel } from './blocks';
import { startClock } from './clock';
import { solveLinked } from './linked';

const pool = new SolverPool({ size: 1 });
afterAll(() => pool.close());

describe('a sub-model with rows that may give way', () => {
	it('keeps one row each way per free column where many rows bound it alone', async () => {
		// At most 12 suppliers over the event: each supplier's event indicator v[s] has a row
		// y[s,i] <= v[s] for every item it bids on. With every item held, those rows bound v[s] alone.
		const problem = generateProblem({ items: 40, suppliers: 14, seed: 3, rules: eventBenchmarkRules });
		const model = buildModel(problem);
		const blocks = blocksOf(problem, model);
		const award = await solveLinked(problem, pool, { gap: 1e-4 }, startClock(10), undefined, false);
		expect(award.columns).not.toBeNull();
		const indicators = blocks.globalColumns.filter((j) => model.columns[j]!.kind === 'wins_group');
		expect(indicators.length).toBe(14);
		const linking = (r: number) => blocks.rowBlock[r] === LINKING;
		const cut = subModel(model, blocks, indicators, award.columns!, { elasticRow: linking, penalty: 1e6 });
		// Rows of the whole model on an indicator: hundreds (one per bid of its supplier, and the counts).
		const onIndicators = new Set<number>();
		for (const j of indicators)
			for (let k = model.starts[j]!; k < model.starts[j + 1]!; k++) onIndicators.add(model.indices[k]!);
		expect(onIndicators.size).toBeGreaterThan(200);
		// In the cut: at most two per indicator, and the rows with more than one indicator in them.
		expect(cut.model.numRows).toBeLessThanOrEqual(2 * indicators.length + 2);
		// Solved, the indicators it sets keep every row of the whole model, the items as awarded.
		const outcome = await pool.solve(cut.model, { timeLimit: 10 });
		expect(outcome.status).toBe('optimal');
		const x = Float64Array.from(award.columns!);
		cut.columns.forEach((j, p) => j >= 0 && (x[j] = outcome.columns![p]!));
		const activity = rowActivities(model, blocks, x);
		for (let r = 0; r < model.numRows; r++)
			expect(rowExcess(model, r, activity[r]!)).toBeLessThanOrEqual(1e-7);
	});
});
