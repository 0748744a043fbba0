// The award engine: a problem in, the allocation that costs least out. Pure: every solve goes through
// the Solver it is given (the worker pool in the app, one in-process instance in tests and the CLI).
// Explanations (rule costs, conflicts, sensitivity) come only when asked, with `explain: true`, or later
// from the stored result through explainAward (explain.ts).
import { allocationCost, checkAllocation } from './check';
import { explainAward } from './explain';
import { solveProblem } from './methods/choose';
import type { AwardProblem } from './problem';
import { baselineCost, supplierTotals } from './result';
import type { Solver } from './solver';
import { usable, type AwardOptions, type AwardResult } from './types';

export async function solveAward(
	problem: AwardProblem,
	solver: Solver,
	options: AwardOptions = {}
): Promise<AwardResult> {
	const solved = await solveProblem(problem, solver, options);
	const uncovered = new Set(solved.uncovered.map((u) => u.item));
	const hasAllocation = usable(solved.status);
	const baseline = baselineCost(problem, uncovered);
	const total = hasAllocation ? allocationCost(problem, solved.lines) : null;
	const violations = hasAllocation ? checkAllocation(problem, solved.lines, uncovered) : [];
	const result: AwardResult = {
		// Never "optimal" with a violation the independent checker found: then the award is only feasible
		// as the model saw it, and the violations say where it and the problem disagree.
		status: solved.status === 'optimal' && violations.length ? 'feasible' : solved.status,
		method: solved.method,
		currency: problem.currency,
		totalCost: total,
		baselineCost: baseline,
		savings: baseline !== null && total !== null ? baseline - total : null,
		bound: solved.bound,
		gap: solved.gap,
		awards: solved.lines,
		supplierTotals: supplierTotals(solved.lines),
		uncoveredItems: solved.uncovered,
		solveSeconds: solved.seconds,
		modelSize: solved.modelSize,
		violations
	};
	if (!options.explain) return result;
	return Object.assign(result, await explainAward(problem, result, solver, options));
}

export { ruleLabel } from './describe';
export { explainAward } from './explain';
export { FULL_MIP_MAX_INTEGERS } from './methods/choose';
export { independentItemGroups } from './methods/decomposition';
export type { AwardProblem } from './problem';
export type { Solver, SolveOptions, SolveOutcome, SolveStatus } from './solver';
export type {
	AwardExplanations,
	AwardOptions,
	AwardResult,
	Conflict,
	Method,
	Progress,
	RuleCost,
	Sensitivity
} from './types';
