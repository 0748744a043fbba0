// Which method solves a problem, and the time limit over all its solves:
// - no integer choices, or few (up to FULL_MIP_MAX_INTEGERS) with only item rules and capacities: one
//   whole model (an LP or a MIP), or each independent group of items apart when integers are needed;
// - more, with only capacities joining items: LP-guided (lp-guided.ts), and the full MIP in the time left
//   while the gap is above the one asked for and the MIP is small enough to finish
//   (up to FULL_MIP_FALLBACK_INTEGERS);
// - rules that link items (lot and event shares, spend caps, counts, fixed costs per supplier, bundles):
//   relax the links (linked.ts) for a first award; then, up to LINKED_START_MAX_INTEGERS (and 500 a second of the limit) and from
//   LINKED_START_MIN_INTEGERS, the full MIP starts from that award (HiGHS prunes against it from its first
//   node) in the time left. Above, relaxing the links has the whole limit.
// Where two methods run, the better award and the higher bound are kept.
import { buildModel } from '../model';
import type { AwardProblem } from '../problem';
import type { Solver } from '../solver';
import type { AwardOptions, Progress, Solved } from '../types';
import { DEFAULT_TIME_LIMIT, startClock, type Clock } from './clock';
import { independentItemGroups, solveDecomposed } from './decomposition';
import { integerEstimate, lpGuidedAppliesTo, solveLpGuided } from './lp-guided';
import { solveLinked } from './linked';
import { solveWhole } from './mip';

/** Above this many integer choices (in one group of linked items) a large-problem method runs first. */
export const FULL_MIP_MAX_INTEGERS = 5_000;
/** Up to this many, the full MIP runs after it in the time left while the gap is above the one asked for. */
export const FULL_MIP_FALLBACK_INTEGERS = 20_000;
/**
 * From this many integer choices, a problem with rules that link items gets its first award by relaxing
 * the links, and the full MIP starts from it. Below, the full MIP alone finishes in well under a second.
 */
export const LINKED_START_MIN_INTEGERS = 1_000;
/**
 * Up to this many, and up to LINKED_START_INTEGERS_PER_SECOND per second of the time limit, the full MIP
 * starts from the award found by relaxing the links. The MIP must get past its root to help: at 2,000 x
 * 30 (42,000 integers) with an event supplier count it had not in 45 s (gap 3.9%, against 2.3% from
 * relaxing the links alone), and had in 110 s (gap 1.1% against 1.6%).
 */
export const LINKED_START_MAX_INTEGERS = 60_000;
export const LINKED_START_INTEGERS_PER_SECOND = 500;
/** The share of the time limit relaxing the links may take before the full MIP starts from its award. */
const LINKED_START_SHARE = 0.25;
/**
 * HiGHS checks its clock between nodes and heuristics, so a MIP ends past its limit: on the 300 x 20
 * `event` benchmark model limits of 5 s, 15 s and 58 s ended 0.3-0.4 s, 1.6-1.7 s and 4 s late, with or
 * without a start. A MIP is given this share of the time left.
 */
const MIP_TIME_SHARE = 0.92;

/**
 * Every solve through `solver` gets the time left on the clock, never its own full limit. Progress is
 * passed on only where the caller says a solve's awards are awards of the whole problem (`reports`).
 */
function onClock(solver: Solver, clock: Clock, reports = false): Solver {
	return {
		solve: (model, { gap, relax, start, onProgress }) => {
			const mip = model.integers > 0 && !relax;
			const left = clock.left() * (mip ? MIP_TIME_SHARE : 1);
			return solver.solve(model, {
				gap,
				relax,
				start,
				timeLimit: Math.max(0.2, left),
				...(reports && onProgress ? { onProgress } : {})
			});
		}
	};
}

/** A MIP's progress joined with an award and bound found before it, as the whole solve's progress. */
function joined(before: Solved, clock: Clock, report: (progress: Progress) => void) {
	return (mip: Progress) => {
		const awards = [before.objective, mip.objective].filter((x): x is number => x !== null);
		const objective = awards.length ? Math.min(...awards) : null;
		const bounds = [before.bound, mip.bound].filter((x): x is number => x !== null);
		const bound = bounds.length ? Math.max(...bounds) : null;
		report({
			seconds: clock.elapsed(),
			objective,
			bound: bound !== null && objective !== null ? Math.min(bound, objective) : bound
		});
	};
}

/** The better award (lower cost) and the higher of the two bounds. */
function best(a: Solved, b: Solved, gapWanted: number): Solved {
	const usable = (s: Solved) => s.objective !== null && (s.status === 'optimal' || s.status === 'feasible');
	// The later award counts as better only when it is cheaper by more than rounding: a MIP started from
	// an award returns that award when it finds nothing better, and it stays the first method's.
	const cheaper = (x: number, y: number) => x < y - 1e-9 * Math.max(1, Math.abs(y));
	const winner = !usable(b) ? a : !usable(a) ? b : cheaper(b.objective!, a.objective!) ? b : a;
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
	const wanted = options.gap ?? 1e-6;
	const linking = integers > 0 && !lpGuidedAppliesTo(effective);
	const startsTheMip =
		chosen === 'auto' &&
		linking &&
		integers >= LINKED_START_MIN_INTEGERS &&
		integers <= LINKED_START_MAX_INTEGERS &&
		integers <= LINKED_START_INTEGERS_PER_SECOND * (options.timeLimit ?? DEFAULT_TIME_LIMIT);
	if (startsTheMip) {
		const share = startClock(
			Math.min(clock.left(), LINKED_START_SHARE * (options.timeLimit ?? DEFAULT_TIME_LIMIT))
		);
		const { columns, ...first } = await linked(effective, onClock(solver, share), options, share, false);
		if (settled(first) || clock.left() < 1) return first;
		const model = buildModel(effective);
		const whole = await solveWhole(effective, model, onClock(solver, clock, true), {
			...options,
			start: columns ?? undefined,
			onProgress: options.onProgress && joined(first, clock, options.onProgress)
		});
		return best(first, whole, wanted);
	}
	const large =
		integers > 0 &&
		(chosen === 'lp_guided' ||
			chosen === 'lagrangian' ||
			(chosen === 'auto' && integers > FULL_MIP_MAX_INTEGERS));
	if (large) {
		const guided = chosen === 'lp_guided' || (chosen === 'auto' && !linking);
		const first: Solved = guided
			? await lpGuided(effective, timed, options)
			: withoutColumns(await linked(effective, timed, options, clock));
		if (chosen !== 'auto' || settled(first) || integers > FULL_MIP_FALLBACK_INTEGERS || clock.left() < 1)
			return first;
		const model = buildModel(effective);
		const whole = await solveWhole(effective, model, onClock(solver, clock, true), {
			...options,
			onProgress: options.onProgress && joined(first, clock, options.onProgress)
		});
		return best(first, whole, wanted);
	}
	const model = buildModel(problem, { withoutRules });
	const wantSplit = chosen === 'decomposed' || (chosen !== 'monolithic' && model.integers > 0);
	const groups = wantSplit ? independentItemGroups(model, problem) : [];
	if (groups.length > 1) return solveDecomposed(problem, model, groups, timed, options, withoutRules);
	return solveWhole(problem, model, onClock(solver, clock, true), options);
}

/** Ended for good: proven optimal, or no award exists. */
function settled(outcome: Solved): boolean {
	return outcome.status === 'optimal' || outcome.status === 'infeasible' || outcome.status === 'unbounded';
}

async function lpGuided(problem: AwardProblem, solver: Solver, options: AwardOptions): Promise<Solved> {
	const { repairedItems: _repaired, ...outcome } = await solveLpGuided(problem, solver, options);
	return { ...outcome, method: 'lp_guided' };
}

function withoutColumns({ columns: _columns, ...outcome }: Solved & { columns: unknown }): Solved {
	return outcome;
}

/** Relaxing the links, on the given clock; the award's columns kept for a MIP to start from. */
async function linked(
	problem: AwardProblem,
	solver: Solver,
	options: AwardOptions,
	clock: Clock,
	strengthen = true
): Promise<Solved & { columns: Float64Array | null }> {
	return solveLinked(problem, solver, options, clock, options.onProgress, strengthen);
}
