// Which method solves a problem, and the time limit over all its solves:
// - no integer choices, or few (up to FULL_MIP_MAX_INTEGERS): one whole model (an LP or a MIP), or
//   each independent group of items apart when integers are needed;
// - more, with only capacities joining items: LP-guided (lp-guided.ts);
// - more, with rules that link items (lot and event shares, spend caps, counts, fixed costs per
//   supplier, bundles): relax the links (linked.ts).
// When the large-problem method stops above the requested gap and the full MIP is small enough to finish
// (up to FULL_MIP_FALLBACK_INTEGERS), the full MIP runs in the time left and the better award and the
// higher bound are kept.
import { buildModel } from '../model';
import type { AwardProblem } from '../problem';
import type { Solver } from '../solver';
import type { AwardOptions, Solved } from '../types';
import { startClock, type Clock } from './clock';
import { independentItemGroups, solveDecomposed } from './decomposition';
import { integerEstimate, lpGuidedAppliesTo, solveLpGuided } from './lp-guided';
import { solveLinked } from './linked';
import { solveWhole } from './mip';

/** Above this many integer choices (in one group of linked items) a large-problem method runs first. */
export const FULL_MIP_MAX_INTEGERS = 5_000;
/** Up to this many, the full MIP runs after it in the time left while the gap is above the one asked for. */
export const FULL_MIP_FALLBACK_INTEGERS = 20_000;

/** Every solve through `solver` gets the time left on the clock, never its own full limit. */
function onClock(solver: Solver, clock: Clock): Solver {
	return {
		// Only what a solve takes: the options may carry a callback, which cannot cross to a worker thread.
		solve: (model, { gap, relax }) =>
			solver.solve(model, { gap, relax, timeLimit: Math.max(0.2, clock.left()) })
	};
}

/** The better award (lower cost) and the higher of the two bounds. */
function best(a: Solved, b: Solved, gapWanted: number): Solved {
	const usable = (s: Solved) => s.objective !== null && (s.status === 'optimal' || s.status === 'feasible');
	const winner = !usable(b) ? a : !usable(a) ? b : b.objective! < a.objective! ? b : a;
	const bounds = [a.bound, b.bound].filter((x): x is number => x !== null && Number.isFinite(x));
	const bound = bounds.length ? Math.max(...bounds) : null;
	if (!usable(winner)) return { ...winner, bound, seconds: a.seconds + b.seconds };
	const objective = winner.objective!;
	const proven = bound === null ? null : Math.min(bound, objective);
	const gap = proven === null ? null : (objective - proven) / Math.max(1e-9, Math.abs(objective));
	return {
		...winner,
		status: winner.status === 'optimal' || (gap !== null && gap <= gapWanted) ? 'optimal' : 'feasible',
		bound: proven,
		gap: winner.status === 'optimal' && gap === null ? winner.gap : gap,
		seconds: a.seconds + b.seconds
	};
}

/** Solves the problem, without the rules in withoutRules, by the method the options and its size call for. */
export async function solveProblem(
	problem: AwardProblem,
	solver: Solver,
	options: AwardOptions,
	withoutRules?: ReadonlySet<number>
): Promise<Solved> {
	const clock = startClock(options.timeLimit);
	const timed = onClock(solver, clock);
	const effective = withoutRules?.size
		? { ...problem, rules: problem.rules.filter((_, r) => !withoutRules.has(r)) }
		: problem;
	const integers = integerEstimate(effective);
	const chosen = options.method ?? 'auto';
	const large =
		integers > 0 &&
		(chosen === 'lp_guided' ||
			chosen === 'lagrangian' ||
			(chosen === 'auto' && integers > FULL_MIP_MAX_INTEGERS));
	if (large) {
		const guided = chosen === 'lp_guided' || (chosen === 'auto' && lpGuidedAppliesTo(effective));
		let first: Solved;
		if (guided) {
			const { repairedItems: _repaired, ...outcome } = await solveLpGuided(effective, timed, options);
			first = { ...outcome, method: 'lp_guided' };
		} else {
			const { columns: _columns, ...outcome } = await solveLinked(
				effective,
				timed,
				options,
				clock,
				options.onProgress
			);
			first = outcome;
		}
		const wanted = options.gap ?? 1e-6;
		const settled =
			first.status === 'optimal' || first.status === 'infeasible' || first.status === 'unbounded';
		if (chosen !== 'auto' || settled || integers > FULL_MIP_FALLBACK_INTEGERS || clock.left() < 1)
			return first;
		const model = buildModel(effective);
		return best(first, await solveWhole(effective, model, timed, options), wanted);
	}
	const model = buildModel(problem, { withoutRules });
	const wantSplit = chosen === 'decomposed' || (chosen !== 'monolithic' && model.integers > 0);
	const groups = wantSplit ? independentItemGroups(model, problem) : [];
	if (groups.length > 1) return solveDecomposed(problem, model, groups, timed, options, withoutRules);
	return solveWhole(problem, model, timed, options);
}
