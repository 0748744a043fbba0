// Decomposition: items that share no row (no capacity, spend cap, lot or event rule, bundle) are
// independent, so each group of linked items is solved as a model of its own, side by side.
import { buildModel, type AwardModel } from '../model';
import { restrictToItems, type AwardProblem } from '../problem';
import { awardLines } from '../result';
import type { SolveOptions, Solver } from '../solver';
import { modelSize, type Solved } from '../types';
import { itemsOfColumn, itemSets } from './blocks';
import { solveStepsFreeFirst } from './steps';

/** The groups of items linked by a row or a column of the model, in the problem's order. */
export function independentItemGroups(model: AwardModel, problem: AwardProblem): string[][] {
	const { find, union } = itemSets(problem);
	const itemOfColumn = model.columns.map((c) => itemsOfColumn(problem, c));
	// Group columns by row: walk the column-major matrix once.
	const firstItemOfRow: (string | undefined)[] = new Array(model.numRows);
	for (let j = 0; j < model.numCols; j++) {
		const items = itemOfColumn[j]!;
		for (let k = model.starts[j]!; k < model.starts[j + 1]!; k++) {
			const row = model.indices[k]!;
			for (const item of items) {
				const first = firstItemOfRow[row];
				if (first === undefined) firstItemOfRow[row] = item;
				else union(first, item);
			}
		}
	}
	for (const items of itemOfColumn) for (let k = 1; k < items.length; k++) union(items[0]!, items[k]!);
	const groups = new Map<string, string[]>();
	for (const item of problem.items) {
		const root = find(item.ref);
		groups.set(root, [...(groups.get(root) ?? []), item.ref]);
	}
	return [...groups.values()];
}

/**
 * Solves each group apart; the status is the worst of the parts', the objective and bound their sums.
 * `whole` is the model of the whole problem, for its size and uncovered items.
 */
export async function solveDecomposed(
	problem: AwardProblem,
	whole: AwardModel,
	groups: string[][],
	solver: Solver,
	options: SolveOptions,
	withoutRules?: ReadonlySet<number>
): Promise<Solved> {
	const parts = await Promise.all(
		groups.map(async (items) => {
			const part = restrictToItems(problem, items);
			const partModel = buildModel(part, { withoutRules });
			const outcome = await solveStepsFreeFirst(solver, partModel, options);
			return { part, partModel, outcome };
		})
	);
	const worst = (
		['infeasible', 'unbounded', 'solver_error', 'no_solution_in_time', 'feasible', 'optimal'] as const
	).find((s) => parts.some((p) => p.outcome.status === s))!;
	const usable = worst === 'optimal' || worst === 'feasible';
	const objective = usable ? parts.reduce((a, p) => a + p.outcome.objective!, 0) : null;
	const bound = parts.every((p) => p.outcome.bound !== null)
		? parts.reduce((a, p) => a + p.outcome.bound!, 0)
		: null;
	return {
		status: worst,
		method: 'decomposed',
		objective,
		bound,
		gap:
			objective !== null && bound !== null
				? Math.abs(objective - bound) / Math.max(1e-9, Math.abs(objective))
				: null,
		lines: usable
			? parts.flatMap((p) => awardLines(p.part, p.partModel, p.outcome.columns!, p.outcome.isMip))
			: [],
		seconds: parts.reduce((a, p) => Math.max(a, p.outcome.seconds), 0),
		uncovered: whole.uncovered,
		modelSize: modelSize(whole)
	};
}
