// The award engine: a problem in, the allocation that costs least out, with what each rule costs,
// which rules clash when nothing fits, and how the answer would move. Pure: every solve goes through
// the Solver it is given (the worker pool in the app, one in-process instance in tests and the CLI).
import { allocationCost, checkAllocation } from './check';
import { buildModel, type AwardModel } from './model';
import { integerEstimate, lpGuidedAppliesTo, solveLpGuided } from './lp-guided';
import { restrictToItems, type AwardProblem, type AwardRule } from './problem';
import { awardLines, baselineCost, supplierTotals, type AwardLine, type SupplierTotal } from './result';
import type { SolveOptions, SolveOutcome, SolveStatus } from './solve';

export interface Solver {
	solve(model: AwardModel, options: SolveOptions): Promise<SolveOutcome>;
}

export type Method = 'lp' | 'mip' | 'decomposed' | 'lp_guided';

/** Above this many integer choices (in one group of linked items) the LP-guided method replaces the full MIP. */
export const FULL_MIP_MAX_INTEGERS = 5_000;

export interface AwardOptions extends SolveOptions {
	/**
	 * `auto`: independent item groups are solved apart when integers are needed; a single large group
	 * goes LP-guided. `monolithic` always solves one full model.
	 */
	method?: 'auto' | 'monolithic' | 'decomposed' | 'lp_guided';
	explain?: boolean;
}

export interface RuleCost {
	rule: number;
	label: string;
	/** What the rule adds: the optimum with all rules minus the optimum without this one (>= 0 for a restricting rule). */
	cost: number | null;
	/** Optimum with this and all earlier rules minus the optimum with only the earlier ones. */
	cumulativeCost: number | null;
	statusWithout: SolveStatus;
}

export interface Conflict {
	label: string;
	amount: number;
	text: string;
}

export interface Sensitivity {
	/** True when integer choices were fixed at the solution: then the values hold only near it. */
	local: boolean;
	coverPrices: { item: string; pricePerUnit: number; text: string }[];
	capacityPrices: { supplier: string; valuePerUnit: number; text: string }[];
	losingBids: { supplier: string; item: string; unitPrice: number; winsBelow: number; text: string }[];
}

export interface AwardResult {
	status: SolveStatus | 'invalid_input';
	method: Method;
	currency: string;
	totalCost: number | null;
	baselineCost: number | null;
	savings: number | null;
	bound: number | null;
	gap: number | null;
	awards: AwardLine[];
	supplierTotals: SupplierTotal[];
	uncoveredItems: { item: string; reason: string }[];
	solveSeconds: number;
	modelSize: { rows: number; columns: number; integers: number };
	/** Problems the independent checker found in the allocation; empty when it keeps every rule. */
	violations: string[];
	ruleCosts?: RuleCost[];
	conflicts?: Conflict[];
	sensitivity?: Sensitivity;
}

export function ruleLabel(rule: AwardRule, index: number): string {
	return rule.label ?? `rule ${index + 1} (${rule.type.replace('_', ' ')})`;
}

/** Items that share no row (no capacity, spend cap, lot or event rule, bundle) can be solved apart. */
export function independentItemGroups(model: AwardModel, problem: AwardProblem): string[][] {
	const parent = new Map<string, string>();
	const find = (a: string): string => {
		let root = a;
		while (parent.get(root)! !== root) root = parent.get(root)!;
		parent.set(a, root);
		return root;
	};
	const union = (a: string, b: string) => parent.set(find(a), find(b));
	for (const item of problem.items) parent.set(item.ref, item.ref);
	const itemOfColumn = model.columns.map((c) => {
		if (c.kind === 'tier' || c.kind === 'tier_used') return [problem.bids[c.bid]!.item];
		if (c.kind === 'bundle') return problem.bundles[c.bundle]!.items.map((l) => l.item);
		if (c.kind === 'wins') return [c.item];
		return [];
	});
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

interface Solved {
	status: SolveStatus;
	method: Method;
	objective: number | null;
	bound: number | null;
	gap: number | null;
	lines: AwardLine[];
	seconds: number;
	model: AwardModel | null;
	uncovered: { item: string; reason: string }[];
	modelSize: { rows: number; columns: number; integers: number };
	outcome: SolveOutcome | null;
}

async function solveOnce(
	problem: AwardProblem,
	solver: Solver,
	options: AwardOptions,
	withoutRules?: Set<number>
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
		const outcome = await solveLpGuided(effective, solver, options);
		return { ...outcome, method: 'lp_guided', model: null, outcome: null };
	}
	const model = buildModel(problem, { withoutRules });
	const sizeOf = { rows: model.numRows, columns: model.numCols, integers: model.integers };
	const wantSplit =
		options.method === 'decomposed' || (options.method !== 'monolithic' && model.integers > 0);
	const groups = wantSplit ? independentItemGroups(model, problem) : [];
	if (groups.length > 1) {
		const parts = await Promise.all(
			groups.map(async (items) => {
				const part = restrictToItems(problem, items);
				const partModel = buildModel(part, { withoutRules });
				const outcome = await solver.solve(partModel, options);
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
			lines: usable ? parts.flatMap((p) => awardLines(p.part, p.partModel, p.outcome.columns!)) : [],
			seconds: parts.reduce((a, p) => Math.max(a, p.outcome.seconds), 0),
			model,
			uncovered: model.uncovered,
			modelSize: sizeOf,
			outcome: null
		};
	}
	const outcome = await solver.solve(model, options);
	const usable = outcome.status === 'optimal' || outcome.status === 'feasible';
	return {
		status: outcome.status,
		method: model.integers > 0 ? 'mip' : 'lp',
		objective: outcome.objective,
		bound: outcome.bound,
		gap: outcome.gap,
		lines: usable ? awardLines(problem, model, outcome.columns!) : [],
		seconds: outcome.seconds,
		model,
		uncovered: model.uncovered,
		modelSize: sizeOf,
		outcome
	};
}

const money = (value: number) => Math.round(value * 100) / 100;
const round9 = (value: number) => Math.round(value * 1e9) / 1e9;

export async function solveAward(
	problem: AwardProblem,
	solver: Solver,
	options: AwardOptions = {}
): Promise<AwardResult> {
	const solved = await solveOnce(problem, solver, options);
	const uncovered = new Set(solved.uncovered.map((u) => u.item));
	const usable = solved.status === 'optimal' || solved.status === 'feasible';
	const baseline = baselineCost(problem, uncovered);
	const total = usable ? allocationCost(problem, solved.lines) : null;
	const result: AwardResult = {
		status: solved.status,
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
		violations: usable ? checkAllocation(problem, solved.lines, uncovered) : []
	};
	if (!options.explain) return result;
	if (usable) {
		result.ruleCosts = await ruleCosts(problem, solver, options, total!);
		result.sensitivity = await sensitivity(problem, solver, options, solved);
	} else if (solved.status === 'infeasible') {
		result.conflicts = await conflicts(problem, solver, options);
	}
	return result;
}

async function ruleCosts(
	problem: AwardProblem,
	solver: Solver,
	options: AwardOptions,
	withAll: number
): Promise<RuleCost[]> {
	const n = problem.rules.length;
	const all = [...problem.rules.keys()];
	const objective = async (without: Set<number>) => {
		const s = await solveOnce(problem, solver, { ...options, explain: false }, without);
		const kept = { ...problem, rules: problem.rules.filter((_, r) => !without.has(r)) };
		return {
			status: s.status,
			value: s.status === 'optimal' || s.status === 'feasible' ? allocationCost(kept, s.lines) : null
		};
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

function describeGiveWay(problem: AwardProblem, model: AwardModel, row: number, amount: number): Conflict {
	const meaning = model.rows[row]!;
	const a = Math.round(amount * 1000) / 1000;
	if (meaning.kind === 'cover') {
		const d = problem.items.find((i) => i.ref === meaning.item)!.quantity;
		return {
			label: `cover of ${meaning.item}`,
			amount: a,
			text: `${meaning.item} can be covered for only ${d - a} of ${d} (${a} short)`
		};
	}
	if (meaning.kind === 'capacity') {
		return {
			label: `capacity of ${meaning.supplier}`,
			amount: a,
			text: `${meaning.supplier}'s capacity is ${a} short`
		};
	}
	if (meaning.kind === 'rule') {
		const rule = problem.rules[meaning.rule]!;
		const label = ruleLabel(rule, meaning.rule);
		const where = meaning.items.length === 1 ? ` on ${meaning.items[0]}` : '';
		if ((rule.type === 'max_share' || rule.type === 'min_share') && meaning.unit === 'quantity') {
			const d = meaning.items.reduce((s, i) => s + problem.items.find((x) => x.ref === i)!.quantity, 0);
			const needed = rule.percent + ((rule.type === 'max_share' ? 1 : -1) * (100 * a)) / d;
			const verb = rule.type === 'max_share' ? 'rise' : 'fall';
			return {
				label,
				amount: a,
				text: `the ${rule.percent}% share ${rule.type === 'max_share' ? 'cap' : 'floor'}${where} (${label}) must ${verb} to ${Math.round(needed * 10) / 10}%`
			};
		}
		if (rule.type === 'supplier_count') {
			return {
				label,
				amount: a,
				text: `${label}${where} must allow ${Math.round(a)} ${rule.max !== undefined ? 'more' : 'fewer'} supplier${Math.round(a) === 1 ? '' : 's'}`
			};
		}
		if (rule.type === 'min_award') {
			return { label, amount: a, text: `the minimum award${where} (${label}) must fall by ${a}` };
		}
		if (rule.type === 'exclude') {
			return { label, amount: a, text: `the exclusion${where} (${label}) must let ${a} units through` };
		}
		return {
			label,
			amount: a,
			text: `${label}${where} must give way by ${a} ${meaning.unit === 'spend' ? problem.currency : 'units'}`
		};
	}
	return { label: 'structure', amount: a, text: `an internal row must give way by ${a}` };
}

async function conflicts(problem: AwardProblem, solver: Solver, options: AwardOptions): Promise<Conflict[]> {
	const model = buildModel(problem, { elastic: true });
	const outcome = await solver.solve(model, options);
	if (!outcome.columns) return [];
	const found: Conflict[] = [];
	model.columns.forEach((meaning, j) => {
		if (meaning.kind === 'slack' && outcome.columns![j]! > 1e-6)
			found.push(describeGiveWay(problem, model, meaning.row, outcome.columns![j]!));
	});
	return found;
}

async function sensitivity(
	problem: AwardProblem,
	solver: Solver,
	options: AwardOptions,
	solved: Solved
): Promise<Sensitivity> {
	let model = solved.model ?? buildModel(problem);
	let outcome = solved.outcome;
	const local = model.integers > 0 || solved.method === 'decomposed' || solved.method === 'lp_guided';
	if (local || !outcome?.rowDuals) {
		// Duals of the LP with every integer fixed at its value in the solution: valid only near it.
		const fixed = buildModel(problem);
		const values = solved.outcome?.columns ?? null;
		if (values) {
			fixed.colLower = Float64Array.from(fixed.colLower);
			fixed.colUpper = Float64Array.from(fixed.colUpper);
			fixed.columns.forEach((_, j) => {
				if (fixed.integrality[j]) {
					const v = Math.round(values[j]!);
					fixed.colLower[j] = v;
					fixed.colUpper[j] = v;
				}
			});
		} else {
			// decomposed: fix each winning bid's tiers from the lines
			const won = new Set(solved.lines.map((l) => `${l.supplier}|${l.item}`));
			fixed.columns.forEach((meaning, j) => {
				if (!fixed.integrality[j]) return;
				let on = 0;
				if (meaning.kind === 'wins') on = won.has(`${meaning.supplier}|${meaning.item}`) ? 1 : 0;
				if (meaning.kind === 'bundle')
					on = solved.lines.some((l) => l.bundle === problem.bundles[meaning.bundle]!.ref) ? 1 : 0;
				if (meaning.kind === 'tier_used') {
					const bid = problem.bids[meaning.bid]!;
					const line = solved.lines.find(
						(l) => !l.bundle && l.supplier === bid.supplier && l.item === bid.item
					);
					const tiers = [0, ...(bid.priceBreaks ?? []).map((b) => b.fromQuantity)];
					on = line && tiers.filter((f) => line.quantity >= f - 1e-9).length - 1 === meaning.tier ? 1 : 0;
				}
				if (meaning.kind === 'wins_group')
					on = solved.lines.some((l) => l.supplier === meaning.supplier) ? 1 : 0;
				fixed.colLower[j] = on;
				fixed.colUpper[j] = on;
			});
		}
		fixed.integers = 0;
		model = fixed;
		outcome = await solver.solve(fixed, { ...options, relax: true });
	}
	const result: Sensitivity = { local, coverPrices: [], capacityPrices: [], losingBids: [] };
	if (!outcome?.rowDuals || !outcome.reducedCosts || !outcome.columns) return result;
	const c = problem.currency;
	model.rows.forEach((meaning, row) => {
		const dual = outcome!.rowDuals![row]!;
		if (meaning.kind === 'cover') {
			result.coverPrices.push({
				item: meaning.item,
				pricePerUnit: dual,
				text: `one more unit of ${meaning.item} would cost ${money(dual)} ${c}`
			});
		}
		if (meaning.kind === 'capacity' && Math.abs(dual) > 1e-9) {
			result.capacityPrices.push({
				supplier: meaning.supplier,
				valuePerUnit: -dual,
				text: `one more unit of capacity at ${meaning.supplier} would save ${money(-dual)} ${c}`
			});
		}
	});
	const winning = new Set(solved.lines.map((l) => `${l.supplier}|${l.item}`));
	model.columns.forEach((meaning, j) => {
		if (meaning.kind !== 'tier' || meaning.tier !== 0) return;
		const bid = problem.bids[meaning.bid]!;
		if (winning.has(`${bid.supplier}|${bid.item}`) || model.colUpper[j]! <= 0) return;
		const reduced = outcome!.reducedCosts![j]!;
		if (reduced <= 1e-9) return;
		const threshold = bid.unitPrice - reduced;
		result.losingBids.push({
			supplier: bid.supplier,
			item: bid.item,
			unitPrice: bid.unitPrice,
			winsBelow: threshold,
			text: `${bid.supplier} would start to win ${bid.item} below ${money(threshold)} ${c}`
		});
	});
	return result;
}

export type { AwardProblem };
