// What each rule costs: every number a real solve of the problem with some rules left out.
import { allocationCost } from '../check';
import { ruleLabel } from '../describe';
import { solveProblem } from '../methods/choose';
import type { AwardProblem } from '../problem';
import type { Solver } from '../solver';
import { usable, type AwardOptions, type RuleCost } from '../types';

const round9 = (value: number) => Math.round(value * 1e9) / 1e9;

/** withAll: the cost of the allocation that keeps every rule. */
export async function ruleCosts(
	problem: AwardProblem,
	solver: Solver,
	options: AwardOptions,
	withAll: number
): Promise<RuleCost[]> {
	const n = problem.rules.length;
	const all = [...problem.rules.keys()];
	const objective = async (without: Set<number>) => {
		const s = await solveProblem(problem, solver, { ...options, explain: false }, without);
		const kept = { ...problem, rules: problem.rules.filter((_, r) => !without.has(r)) };
		return { status: s.status, value: usable(s.status) ? allocationCost(kept, s.lines) : null };
	};
	// Each rule alone (all others kept), and the prefixes in the rules' order: every one a real solve.
	const [alone, prefixes] = await Promise.all([
		Promise.all(all.map((r) => objective(new Set([r])))),
		Promise.all(Array.from({ length: n + 1 }, (_, k) => objective(new Set(all.slice(k)))))
	]);
	return problem.rules.map((rule, r) => ({
		rule: r,
		label: ruleLabel(rule, r),
		cost: alone[r]!.value === null ? null : round9(withAll - alone[r]!.value!),
		cumulativeCost:
			prefixes[r + 1]!.value === null || prefixes[r]!.value === null
				? null
				: round9(prefixes[r + 1]!.value! - prefixes[r]!.value!),
		statusWithout: alone[r]!.status
	}));
}
