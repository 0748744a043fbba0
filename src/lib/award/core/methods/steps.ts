// Quantities in steps (whole units, packs: units.ts) make integer columns, many more than the choices a
// model has otherwise, and most optima do not need them: with whole demands and capacities the best
// allocation in parts is often whole already. So a model with step columns is solved first with those
// columns free; when that answer is whole in every step column it is the answer in steps too (the
// optimum of a relaxation that keeps the stricter rules is optimal for them, with the same bound).
// Otherwise the model is solved as it is, in the time left.
import type { AwardModel } from '../model';
import type { SolveOptions, SolveOutcome, Solver } from '../solver';

/** How far from a whole number of steps a free column may be and still be taken as whole. */
const WHOLE = 1e-6;

export async function solveStepsFreeFirst(
	solver: Solver,
	model: AwardModel,
	options: SolveOptions
): Promise<SolveOutcome> {
	const stepped: number[] = [];
	model.columns.forEach((c, j) => {
		if (c.kind === 'tier' && model.integrality[j]) stepped.push(j);
	});
	if (!stepped.length || options.relax) return solver.solve(model, options);
	const integrality = Int32Array.from(model.integrality);
	for (const j of stepped) integrality[j] = 0;
	// Its awards may be in parts, so they are not reported as awards of this model.
	const { onProgress: _progress, ...freeOptions } = options;
	const free = await solver.solve(
		{ ...model, integrality, integers: model.integers - stepped.length },
		freeOptions
	);
	// In parts there is no answer, so there is none in steps either.
	if (free.status === 'infeasible') return { ...free, isMip: true };
	const columns = free.columns;
	if ((free.status === 'optimal' || free.status === 'feasible') && columns) {
		if (stepped.every((j) => Math.abs(columns[j]! - Math.round(columns[j]!)) <= WHOLE)) {
			const whole = Float64Array.from(columns);
			for (const j of stepped) whole[j] = Math.round(whole[j]!);
			return { ...free, columns: whole, rowDuals: null, reducedCosts: null, isMip: true };
		}
	}
	const left = options.timeLimit === undefined ? undefined : Math.max(1, options.timeLimit - free.seconds);
	const outcome = await solver.solve(model, { ...options, timeLimit: left });
	return { ...outcome, seconds: outcome.seconds + free.seconds };
}
