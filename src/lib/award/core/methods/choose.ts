// Which method solves a problem: LP-guided for one large group of linked items with integer choices,
// decomposition when independent item groups need integers, else one whole model.
import { buildModel } from '../model';
import type { AwardProblem } from '../problem';
import type { Solver } from '../solver';
import type { AwardOptions, Solved } from '../types';
import { independentItemGroups, solveDecomposed } from './decomposition';
import { integerEstimate, lpGuidedAppliesTo, solveLpGuided } from './lp-guided';
import { solveWhole } from './mip';

/** Above this many integer choices (in one group of linked items) the LP-guided method replaces the full MIP. */
export const FULL_MIP_MAX_INTEGERS = 5_000;

/** Solves the problem, without the rules in withoutRules, by the method the options and its size call for. */
export async function solveProblem(
	problem: AwardProblem,
	solver: Solver,
	options: AwardOptions,
	withoutRules?: ReadonlySet<number>
): Promise<Solved> {
	const effective = withoutRules?.size
		? { ...problem, rules: problem.rules.filter((_, r) => !withoutRules.has(r)) }
		: problem;
	const integers = integerEstimate(effective);
	const guided =
		integers > 0 &&
		lpGuidedAppliesTo(effective) &&
		(options.method === 'lp_guided' ||
			((options.method ?? 'auto') === 'auto' && integers > FULL_MIP_MAX_INTEGERS));
	if (guided) {
		const { repairedItems: _repaired, ...outcome } = await solveLpGuided(effective, solver, options);
		return { ...outcome, method: 'lp_guided' };
	}
	const model = buildModel(problem, { withoutRules });
	const wantSplit =
		options.method === 'decomposed' || (options.method !== 'monolithic' && model.integers > 0);
	const groups = wantSplit ? independentItemGroups(model, problem) : [];
	if (groups.length > 1) return solveDecomposed(problem, model, groups, solver, options, withoutRules);
	return solveWhole(problem, model, solver, options);
}
