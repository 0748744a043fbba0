// What each rule costs: every number a real solve of the problem with some rules left out.
//
// Each figure is a difference of two optima, and each optimum is known only to its solve's tolerance:
// a MIP to its relative gap, an LP to HiGHS's optimality tolerances (1e-7 by default, HiGHS's
// documented primal and dual feasibility tolerance; we take it as relative to the objective). A
// difference within the sum of the two is reported as 0, and the tolerance is given with the rule, so a
// restricting rule never shows a small negative cost that is only the solver's rounding.
import { allocationCost } from '../check';
import { ruleLabel } from '../describe';
import { solveProblem } from '../methods/choose';
import type { AwardProblem } from '../problem';
import type { Solver, SolveStatus } from '../solver';
import { usable, type AwardOptions, type RuleCost } from '../types';

const round9 = (value: number) => Math.round(value * 1e9) / 1e9;

/** HiGHS's default primal and dual feasibility tolerance, read as relative to the objective. */
const LP_TOLERANCE = 1e-7;
/** Below a cent of a cent, whatever the sizes: the figures are rounded to nine decimals anyway. */
const ABSOLUTE_TOLERANCE = 1e-6;

interface Optimum {
	status: SolveStatus;
	value: number | null;
	/** The solve's proven relative gap (0 or null for an LP). */
	gap: number | null;
}

const toleranceOf = (a: Optimum, b: Optimum) =>
	((a.gap ?? 0) + LP_TOLERANCE) * Math.abs(a.value!) +
	((b.gap ?? 0) + LP_TOLERANCE) * Math.abs(b.value!) +
	ABSOLUTE_TOLERANCE;

/** a − b, or 0 when that is within the two solves' tolerance, or null when either has no optimum. */
function difference(a: Optimum, b: Optimum): { value: number | null; tolerance: number | null } {
	if (a.value === null || b.value === null) return { value: null, tolerance: null };
	const tolerance = toleranceOf(a, b);
	const value = a.value - b.value;
	return { value: Math.abs(value) <= tolerance ? 0 : round9(value), tolerance };
}

/** withAll: the allocation that keeps every rule, as solved (its cost and proven gap). */
export async function ruleCosts(
	problem: AwardProblem,
	solver: Solver,
	options: AwardOptions,
	withAll: { totalCost: number; gap: number | null }
): Promise<RuleCost[]> {
	const n = problem.rules.length;
	const all = [...problem.rules.keys()];
	const objective = async (without: Set<number>): Promise<Optimum> => {
		const s = await solveProblem(problem, solver, { ...options, explain: false }, without);
		const kept = { ...problem, rules: problem.rules.filter((_, r) => !without.has(r)) };
		return { status: s.status, value: usable(s.status) ? allocationCost(kept, s.lines) : null, gap: s.gap };
	};
	// Each rule alone (all others kept), and the prefixes in the rules' order: every one a real solve.
	const [alone, prefixes] = await Promise.all([
		Promise.all(all.map((r) => objective(new Set([r])))),
		Promise.all(Array.from({ length: n + 1 }, (_, k) => objective(new Set(all.slice(k)))))
	]);
	const kept: Optimum = { status: 'optimal', value: withAll.totalCost, gap: withAll.gap };
	return problem.rules.map((rule, r) => {
		const cost = difference(kept, alone[r]!);
		const onTop = difference(prefixes[r + 1]!, prefixes[r]!);
		const running = difference(prefixes[r + 1]!, prefixes[0]!);
		const tolerances = [cost.tolerance, onTop.tolerance, running.tolerance].filter((t) => t !== null);
		return {
			rule: r,
			label: ruleLabel(rule, r),
			cost: cost.value,
			costOnTopOfEarlier: onTop.value,
			runningTotal: running.value,
			tolerance: tolerances.length ? round9(Math.max(...tolerances)) : null,
			statusWithout: alone[r]!.status
		};
	});
}

/**
 * Rule costs as stored with an explanation, in today's shape. Explanations stored before 2026-12-02
 * (they are hashed, so they stay as written) carry `cumulativeCost`, which was the cost each rule adds
 * on top of the earlier ones; their running total is the sum of those, and their tolerance is unknown.
 */
export function ruleCostsAsStored(stored: readonly unknown[]): RuleCost[] {
	let running = 0;
	let runningKnown = true;
	return stored.map((entry) => {
		if ((entry as RuleCost).costOnTopOfEarlier !== undefined) return entry as RuleCost;
		const { cumulativeCost: onTop = null, ...rest } = entry as Omit<
			RuleCost,
			'costOnTopOfEarlier' | 'runningTotal' | 'tolerance'
		> & { cumulativeCost?: number | null };
		if (onTop === null) runningKnown = false;
		else running += onTop;
		return {
			...rest,
			costOnTopOfEarlier: onTop,
			runningTotal: runningKnown ? round9(running) : null,
			tolerance: null
		};
	});
}
