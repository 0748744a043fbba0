// Explanations of a result, computed after the allocation and from it alone (so they can run later, as
// a job of their own, from the stored problem and result): what each rule costs and how the answer
// would move when it solved, which rules clash when it is infeasible.
import { conflicts } from './explanations/conflicts';
import { ruleCosts } from './explanations/rule-costs';
import { sensitivity } from './explanations/sensitivity';
import type { AwardProblem } from './problem';
import type { Solver } from './solver';
import { usable, type AwardExplanations, type AwardOptions, type AwardResult } from './types';

/**
 * The explanation fields of `result`, a result of solveAward(problem, solver, options): ruleCosts and
 * sensitivity when it has an allocation, conflicts when it is infeasible, none otherwise. Re-solves
 * what it needs (the problem without each rule, the LP with the allocation's integer choices fixed,
 * the feasibility relaxation); pass the options the result was solved with.
 */
export async function explainAward(
	problem: AwardProblem,
	result: AwardResult,
	solver: Solver,
	options: AwardOptions = {}
): Promise<AwardExplanations> {
	// Rule costs re-solve the problem many times: no progress reports from them.
	const { onProgress: _progress, ...rest } = options;
	const solveOptions = { ...rest, explain: false };
	if (usable(result.status) && result.totalCost !== null) {
		return {
			ruleCosts: await ruleCosts(problem, solver, solveOptions, {
				totalCost: result.totalCost,
				gap: result.gap
			}),
			sensitivity: await sensitivity(problem, result, solver, solveOptions)
		};
	}
	if (result.status === 'infeasible') return { conflicts: await conflicts(problem, solver, solveOptions) };
	return {};
}
