// "LP first, then repair" for award models too large for a full MIP (see DEVELOPERS.md and SOLVER
// notes): solve the LP relaxation; keep every item whose LP split already obeys the integer rules once
// its choices are rounded; re-solve the other items in small batches as MIPs, each within its LP
// amounts plus the capacity the LP left unused. The LP optimum is a lower bound on the MIP optimum, so
// the gap reported against it is proven.
import { allocationCost } from './check';
import type { Solver } from './engine';
import { buildModel, type AwardModel } from './model';
import { restrictToItems, type AwardProblem } from './problem';
import { awardLines, type AwardLine } from './result';
import type { SolveOptions, SolveOutcome, SolveStatus } from './solve';

const BATCH_ITEMS = 20;
const TOLERANCE = 1e-6;

export interface GuidedOutcome {
	status: SolveStatus;
	objective: number | null;
	bound: number | null;
	gap: number | null;
	lines: AwardLine[];
	seconds: number;
	repairedItems: number;
}

/** Whether the only rows joining items are capacities: rules over a lot or the event need the full MIP. */
export function lpGuidedApplies(model: AwardModel): boolean {
	return (
		!model.columns.some((c) => c.kind === 'wins_group') &&
		!model.rows.some((r) => r.kind === 'rule' && r.items.length > 1)
	);
}

function itemsOfColumns(model: AwardModel, problem: AwardProblem): string[][] {
	return model.columns.map((c) => {
		if (c.kind === 'tier' || c.kind === 'tier_used') return [problem.bids[c.bid]!.item];
		if (c.kind === 'bundle') return problem.bundles[c.bundle]!.items.map((l) => l.item);
		if (c.kind === 'wins') return [c.item];
		return [];
	});
}

/** Items whose LP split breaks an integer rule once every integer choice is rounded to what the split implies. */
function itemsNeedingRepair(problem: AwardProblem, model: AwardModel, lp: Float64Array): Set<string> {
	const quantityOfPair = new Map<string, number>();
	model.columns.forEach((c, j) => {
		if (c.kind !== 'tier') return;
		const bid = problem.bids[c.bid]!;
		const pair = `${bid.supplier}|${bid.item}`;
		quantityOfPair.set(pair, (quantityOfPair.get(pair) ?? 0) + lp[j]!);
	});
	const repair = new Set<string>();
	const columnItems = itemsOfColumns(model, problem);
	const rounded = Float64Array.from(lp);
	const tierColumn = new Map<string, number>();
	model.columns.forEach((c, j) => {
		if (c.kind === 'tier') tierColumn.set(`${c.bid}|${c.tier}`, j);
	});
	model.columns.forEach((c, j) => {
		if (!model.integrality[j]) return;
		const value = lp[j]!;
		if (c.kind === 'wins')
			rounded[j] = (quantityOfPair.get(`${c.supplier}|${c.item}`) ?? 0) > TOLERANCE ? 1 : 0;
		else if (c.kind === 'tier_used') {
			const tier = tierColumn.get(`${c.bid}|${c.tier}`);
			rounded[j] = tier !== undefined && lp[tier]! > TOLERANCE ? 1 : 0;
		} else {
			rounded[j] = Math.round(value);
			if (Math.abs(value - rounded[j]!) > TOLERANCE) for (const item of columnItems[j]!) repair.add(item);
		}
	});
	const activity = new Float64Array(model.numRows);
	for (let j = 0; j < model.numCols; j++) {
		for (let k = model.starts[j]!; k < model.starts[j + 1]!; k++)
			activity[model.indices[k]!]! += model.values[k]! * rounded[j]!;
	}
	const finite = (v: number) => (Number.isFinite(v) ? Math.abs(v) : 0);
	const broken = new Uint8Array(model.numRows);
	for (let row = 0; row < model.numRows; row++) {
		const slack = TOLERANCE * Math.max(1, finite(model.rowLower[row]!), finite(model.rowUpper[row]!));
		if (activity[row]! < model.rowLower[row]! - slack || activity[row]! > model.rowUpper[row]! + slack)
			broken[row] = 1;
	}
	for (let j = 0; j < model.numCols; j++) {
		for (let k = model.starts[j]!; k < model.starts[j + 1]!; k++) {
			if (broken[model.indices[k]!]) for (const item of columnItems[j]!) repair.add(item);
		}
	}
	// A bundle is repaired with all its items together.
	for (const bundle of problem.bundles) {
		if (bundle.items.some((l) => repair.has(l.item))) for (const l of bundle.items) repair.add(l.item);
	}
	return repair;
}

function batchesOf(problem: AwardProblem, items: string[]): string[][] {
	const bundleOf = new Map<string, number>();
	problem.bundles.forEach((b, k) => b.items.forEach((l) => bundleOf.set(l.item, k)));
	const batches: string[][] = [];
	const placed = new Set<string>();
	let current: string[] = [];
	for (const item of items) {
		if (placed.has(item)) continue;
		const group = bundleOf.has(item)
			? problem.bundles[bundleOf.get(item)!]!.items.map((l) => l.item).filter((i) => !placed.has(i))
			: [item];
		for (const i of group) placed.add(i);
		current.push(...group);
		if (current.length >= BATCH_ITEMS) {
			batches.push(current);
			current = [];
		}
	}
	if (current.length) batches.push(current);
	return batches;
}

export async function solveLpGuided(
	problem: AwardProblem,
	solver: Solver,
	options: SolveOptions,
	model = buildModel(problem)
): Promise<GuidedOutcome> {
	const began = performance.now();
	// The bound: the LP without the rules that only integers express (minimum awards, supplier counts,
	// fixed costs). Its columns are the first columns of the full model, in the same order.
	const integerRules = new Set(
		problem.rules.flatMap((r, k) =>
			r.type === 'min_award' || r.type === 'supplier_count' || r.type === 'award_fixed_cost' ? [k] : []
		)
	);
	const relaxed = buildModel(problem, { withoutRules: integerRules });
	const lp = await solver.solve(relaxed, { ...options, relax: true });
	const elapsed = () => (performance.now() - began) / 1000;
	if (lp.status !== 'optimal' || !lp.columns) {
		return {
			status: lp.status,
			objective: null,
			bound: null,
			gap: null,
			lines: [],
			seconds: elapsed(),
			repairedItems: 0
		};
	}
	const full = new Float64Array(model.numCols);
	full.set(lp.columns.subarray(0, Math.min(relaxed.numCols, model.numCols)));
	const repair = itemsNeedingRepair(problem, model, full);
	const all = awardLines(problem, relaxed, lp.columns);
	const kept = all.filter((l) => !repair.has(l.item));
	// Capacity the LP left unused, shared by the batches in turn.
	const free = new Map(problem.suppliers.map((s) => [s.ref, s.capacity ?? Infinity]));
	for (const line of all) free.set(line.supplier, free.get(line.supplier)! - line.quantity);
	const lines = [...kept];
	const ordered = problem.items.map((i) => i.ref).filter((i) => repair.has(i));
	for (const batch of batchesOf(problem, ordered)) {
		const part = restrictToItems(problem, batch);
		const lpAmounts = new Map<string, number>();
		for (const line of all)
			if (batch.includes(line.item))
				lpAmounts.set(line.supplier, (lpAmounts.get(line.supplier) ?? 0) + line.quantity);
		part.suppliers = part.suppliers.map((s) =>
			s.capacity === undefined
				? s
				: { ...s, capacity: Math.max(0, (lpAmounts.get(s.ref) ?? 0) + free.get(s.ref)!) }
		);
		const partModel = buildModel(part);
		const outcome = await solver.solve(partModel, options);
		if (outcome.status !== 'optimal' && outcome.status !== 'feasible') {
			return {
				status: outcome.status === 'infeasible' ? 'no_solution_in_time' : outcome.status,
				objective: null,
				bound: lp.objective,
				gap: null,
				lines: [],
				seconds: elapsed(),
				repairedItems: repair.size
			};
		}
		const partLines = awardLines(part, partModel, outcome.columns!);
		for (const supplier of part.suppliers) {
			if (supplier.capacity === undefined) continue;
			const used = partLines.filter((l) => l.supplier === supplier.ref).reduce((a, l) => a + l.quantity, 0);
			free.set(supplier.ref, supplier.capacity - used);
		}
		lines.push(...partLines);
	}
	const bound = await lagrangianBound(problem, relaxed, lp, all, ordered, solver, options);
	const order = new Map(problem.items.map((item, index) => [item.ref, index]));
	lines.sort((a, b) => order.get(a.item)! - order.get(b.item)! || a.supplier.localeCompare(b.supplier));
	const objective = allocationCost(problem, lines);
	const gap = Math.max(0, objective - bound) / Math.max(1e-9, Math.abs(objective));
	return {
		status: gap <= (options.gap ?? 1e-6) ? 'optimal' : 'feasible',
		objective,
		bound,
		gap,
		lines,
		seconds: elapsed(),
		repairedItems: repair.size
	};
}

/**
 * A lower bound at least as strong as the LP's: price each capacity at its LP dual λ[s] and drop the
 * capacities (Lagrangian relaxation). Then every item stands alone; for an item kept from the LP its LP
 * split is already optimal, and each repaired item is solved exactly as a small MIP at prices c + λ:
 *   bound = LP + Σ_repaired (MIP_i(c + λ) - LP_i(c + λ)).
 * Rules that read spend would change with the prices, so with those the LP bound is kept.
 */
async function lagrangianBound(
	problem: AwardProblem,
	relaxed: AwardModel,
	lp: SolveOutcome,
	lpLines: AwardLine[],
	repaired: string[],
	solver: Solver,
	options: SolveOptions
): Promise<number> {
	const lpBound = lp.objective!;
	const readsSpend = problem.rules.some(
		(r) =>
			r.type === 'max_spend' || ((r.type === 'max_share' || r.type === 'min_share') && r.basis === 'spend')
	);
	if (!repaired.length || readsSpend || !lp.rowDuals) return lpBound;
	const price = new Map<string, number>();
	relaxed.rows.forEach((meaning, row) => {
		if (meaning.kind === 'capacity') price.set(meaning.supplier, Math.max(0, -lp.rowDuals![row]!));
	});
	const lambda = (s: string) => price.get(s) ?? 0;
	const priced: AwardProblem = {
		...problem,
		suppliers: problem.suppliers.map(({ capacity: _capacity, ...rest }) => rest),
		bids: problem.bids.map((b) => ({
			...b,
			unitPrice: b.unitPrice + lambda(b.supplier),
			priceBreaks: b.priceBreaks?.map((p) => ({ ...p, unitPrice: p.unitPrice + lambda(b.supplier) }))
		})),
		bundles: problem.bundles.map((b) => ({
			...b,
			price: b.price + lambda(b.supplier) * b.items.reduce((a, l) => a + l.quantity, 0)
		}))
	};
	// Items without capacities are independent, so a batch's MIP bound is the sum of its items' bounds.
	const parts = batchesOf(problem, repaired);
	const gains = await Promise.all(
		parts.map(async (items) => {
			const part = restrictToItems(priced, items);
			const outcome = await solver.solve(buildModel(part), options);
			if (outcome.bound === null || (outcome.status !== 'optimal' && outcome.status !== 'feasible')) return 0;
			const atLp = lpLines
				.filter((l) => items.includes(l.item))
				.reduce((a, l) => a + l.cost + lambda(l.supplier) * l.quantity, 0);
			return Math.max(0, outcome.bound - atLp);
		})
	);
	return lpBound + gains.reduce((a, b) => a + b, 0);
}
