// The plain method: the whole problem as one model, an LP when it has no integer choices, else a MIP.
import type { AwardModel } from '../model';
import type { AwardProblem } from '../problem';
import { awardLines } from '../result';
import type { SolveOptions, Solver } from '../solver';
import { modelSize, usable, type Solved } from '../types';
import { solveStepsFreeFirst } from './steps';

export async function solveWhole(
	problem: AwardProblem,
	model: AwardModel,
	solver: Solver,
	options: SolveOptions
): Promise<Solved> {
	const outcome = await solveStepsFreeFirst(solver, model, options);
	return {
		status: outcome.status,
		method: model.integers > 0 ? 'mip' : 'lp',
		objective: outcome.objective,
		bound: outcome.bound,
		gap: outcome.gap,
		lines: usable(outcome.status) ? awardLines(problem, model, outcome.columns!, outcome.isMip) : [],
		seconds: outcome.seconds,
		uncovered: model.uncovered,
		modelSize: modelSize(model)
	};
}
