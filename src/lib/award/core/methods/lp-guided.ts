// "LP first, then repair" for award models too large for a full MIP (see DEVELOPERS.md and SOLVER
// notes): solve the LP relaxation; keep every item whose LP split already obeys the integer rules once
// its choices are rounded; re-solve the other items in small batches as MIPs, each within its LP
// amounts plus the capacity the LP left unused. The LP optimum is a lower bound on the MIP optimum, so
// the gap reported against it is proven.
import { allocationCost } from '../check';
import { buildModel, type AwardModel } from '../model';
import type { AwardProblem, Scope, Who } from '../problem';
import { awardLines, type AwardLine } from '../result';
import type { SolveOptions, SolveOutcome, SolveStatus, Solver } from '../solver';
import { stepsOf } from '../units';

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
	modelSize: { rows: number; columns: number; integers: number };
	uncovered: { item: string; reason: string }[];
}

/** Rules that join items other than through capacities need the full MIP: lot or event shares and spend caps, lot or event supplier counts, fixed costs per supplier. */
export function lpGuidedAppliesTo(problem: AwardProblem, withoutRules?: ReadonlySet<number>): boolean {
	return problem.rules.every((rule, r) => {
		if (withoutRules?.has(r)) return true;
		if (rule.type === 'award_fixed_cost') return rule.per === 'supplier_item';
		if (rule.type === 'exclude') return true;
		return rule.scope === 'each_item' || (typeof rule.scope === 'object' && 'item' in rule.scope);
	});
}

/** Integer choices a full model would have, counted without building it. */
export function integerEstimate(problem: AwardProblem, withoutRules?: ReadonlySet<number>): number {
	const active = problem.rules.filter((_, r) => !withoutRules?.has(r));
	// Each price break adds a tier choice; a bid in steps (whole units, packs) has integer quantities too.
	const { bidStep } = stepsOf(problem);
	const tiers = problem.bids.reduce((n, b, k) => {
		const columns = b.priceBreaks?.length ? b.priceBreaks.length + 1 : 1;
		return n + (columns > 1 ? columns : 0) + (bidStep[k]! > 0 ? columns : 0);
	}, 0);
	const needsWins = active.some(
		(r) => r.type === 'min_award' || r.type === 'supplier_count' || r.type === 'award_fixed_cost'
	);
	if (!needsWins) return tiers + problem.bundles.length;
	const pairs = new Set(problem.bids.map((b) => `${b.supplier}|${b.item}`));
	for (const bundle of problem.bundles)
		for (const line of bundle.items) pairs.add(`${bundle.supplier}|${line.item}`);
	return tiers + problem.bundles.length + pairs.size;
}

/** Bids and bundles grouped by item, so sub-problems of a few items are made without scanning every bid. */
function indexByItem(problem: AwardProblem) {
	const bids = new Map<string, AwardProblem['bids']>();
	for (const bid of problem.bids) {
		let list = bids.get(bid.item);
		if (!list) bids.set(bid.item, (list = []));
		list.push(bid);
	}
	const items = new Map(problem.items.map((i) => [i.ref, i]));
	return (refs: string[]): AwardProblem => {
		const keep = new Set(refs);
		return {
			...problem,
			items: refs.map((r) => items.get(r)!),
			bids: refs.flatMap((r) => bids.get(r) ?? []),
			bundles: problem.bundles.filter((b) => b.items.every((l) => keep.has(l.item))),
			rules: problem.rules.filter(
				(r) =>
					!('scope' in r) || typeof r.scope !== 'object' || !('item' in r.scope) || keep.has(r.scope.item)
			)
		};
	};
}

/**
 * Items whose LP split breaks a rule that only integers express: a minimum award, a supplier count, a
 * win under one unit where wins are counted, a bid spread over price tiers, a bundle taken in part, a
 * quantity that is not a whole number of its steps (whole units, packs).
 */
function itemsBreakingIntegerRules(
	problem: AwardProblem,
	relaxed: AwardModel,
	lp: Float64Array,
	pairQuantity: Map<string, number>
): Set<string> {
	const repair = new Set<string>();
	const tol = TOLERANCE;
	const demand = new Map(problem.items.map((i) => [i.ref, i.quantity]));
	const suppliersOf = new Map<string, string[]>();
	for (const [pair, q] of pairQuantity) {
		if (q <= tol) continue;
		const [s, i] = pair.split('|') as [string, string];
		suppliersOf.set(i, [...(suppliersOf.get(i) ?? []), s]);
	}
	const itemsOf = (scope: Scope) =>
		scope === 'each_item'
			? problem.items.map((i) => i.ref)
			: typeof scope === 'object' && 'item' in scope
				? [scope.item]
				: [];
	const whoOf = (who: Who) =>
		who === 'each_supplier'
			? null
			: 'supplier' in who
				? new Set([who.supplier])
				: new Set(problem.suppliers.filter((s) => s.tags?.includes(who.tag)).map((s) => s.ref));
	const countsWins = problem.rules.some(
		(r) => r.type === 'min_award' || r.type === 'supplier_count' || r.type === 'award_fixed_cost'
	);
	if (countsWins) {
		for (const [item, winners] of suppliersOf) {
			const floor = Math.min(1, demand.get(item)!);
			if (winners.some((s) => pairQuantity.get(`${s}|${item}`)! < floor - tol)) repair.add(item);
		}
	}
	for (const rule of problem.rules) {
		if (rule.type === 'min_award') {
			const who = whoOf(rule.who);
			for (const item of itemsOf(rule.scope)) {
				const d = demand.get(item)!;
				const minimum = Math.min(d, rule.quantity ?? ((rule.percentOfItem ?? 0) / 100) * d);
				for (const s of suppliersOf.get(item) ?? []) {
					if (
						(who === null || who.has(s)) &&
						pairQuantity.get(`${s}|${item}`)! < minimum - tol * Math.max(1, minimum)
					)
						repair.add(item);
				}
			}
		}
		if (rule.type === 'supplier_count') {
			for (const item of itemsOf(rule.scope)) {
				const count = (suppliersOf.get(item) ?? []).length;
				if ((rule.min !== undefined && count < rule.min) || (rule.max !== undefined && count > rule.max))
					repair.add(item);
			}
		}
	}
	// Tiers: a bid's quantity must sit in one tier, inside its range; bundles must be whole.
	const tiersUsed = new Map<number, number>();
	relaxed.columns.forEach((c, j) => {
		const value = lp[j]!;
		if (c.kind === 'tier' && value > tol) {
			const bid = problem.bids[c.bid]!;
			if (relaxed.integrality[j] && Math.abs(value - Math.round(value)) > tol) repair.add(bid.item);
			if (bid.priceBreaks?.length) {
				tiersUsed.set(c.bid, (tiersUsed.get(c.bid) ?? 0) + 1);
				const from = c.tier === 0 ? 0 : bid.priceBreaks[c.tier - 1]!.fromQuantity;
				if (value * (c.step ?? 1) < from - tol * Math.max(1, from)) repair.add(bid.item);
			}
		}
		if (c.kind === 'bundle' && Math.abs(value - Math.round(value)) > tol)
			for (const l of problem.bundles[c.bundle]!.items) repair.add(l.item);
	});
	for (const [b, used] of tiersUsed) if (used > 1) repair.add(problem.bids[b]!.item);
	for (const bundle of problem.bundles)
		if (bundle.items.some((l) => repair.has(l.item))) for (const l of bundle.items) repair.add(l.item);
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
	options: SolveOptions
): Promise<GuidedOutcome> {
	const began = performance.now();
	const elapsed = () => (performance.now() - began) / 1000;
	// The bound: the LP without the rules that only integers express (minimum awards, supplier counts,
	// fixed costs), with price tiers and bundles relaxed.
	const integerRules = new Set(
		problem.rules.flatMap((r, k) =>
			r.type === 'min_award' || r.type === 'supplier_count' || r.type === 'award_fixed_cost' ? [k] : []
		)
	);
	const relaxed = buildModel(problem, { withoutRules: integerRules });
	const size = { rows: relaxed.numRows, columns: relaxed.numCols, integers: integerEstimate(problem) };
	const lp = await solver.solve(relaxed, { ...options, relax: true });
	if (lp.status !== 'optimal' || !lp.columns) {
		return {
			status: lp.status,
			objective: null,
			bound: null,
			gap: null,
			lines: [],
			seconds: elapsed(),
			repairedItems: 0,
			modelSize: size,
			uncovered: relaxed.uncovered
		};
	}
	const pairQuantity = new Map<string, number>();
	const used = new Map<string, number>();
	const add = (m: Map<string, number>, k: string, v: number) => m.set(k, (m.get(k) ?? 0) + v);
	relaxed.columns.forEach((c, j) => {
		const value = lp.columns![j]!;
		if (c.kind === 'tier' && value > 0) {
			const bid = problem.bids[c.bid]!;
			add(pairQuantity, `${bid.supplier}|${bid.item}`, value * (c.step ?? 1));
			add(used, bid.supplier, value * (c.step ?? 1));
		}
		if (c.kind === 'bundle' && value > 0) {
			const bundle = problem.bundles[c.bundle]!;
			for (const l of bundle.items) {
				add(pairQuantity, `${bundle.supplier}|${l.item}`, l.quantity * value);
				add(used, bundle.supplier, l.quantity * value);
			}
		}
	});
	const repair = itemsBreakingIntegerRules(problem, relaxed, lp.columns, pairQuantity);
	const all = awardLines(problem, relaxed, lp.columns);
	const lines = all.filter((l) => !repair.has(l.item));
	// Capacity the LP left unused, shared by the batches in turn.
	const free = new Map(
		problem.suppliers.map((s) => [s.ref, (s.capacity ?? Infinity) - (used.get(s.ref) ?? 0)])
	);
	const subproblem = indexByItem(problem);
	const ordered = problem.items.map((i) => i.ref).filter((i) => repair.has(i));
	const batches = batchesOf(problem, ordered);
	// The Lagrangian batches come first (in parallel): they give the bound, and their solutions are
	// taken as the repair wherever they fit in the capacity left; only the others are solved again.
	const lagrangian = await lagrangianBatches(problem, relaxed, lp, batches, solver, options, subproblem);
	for (const [k, batch] of batches.entries()) {
		const part = subproblem(batch);
		const capacityLeft = new Map<string, number>();
		for (const s of part.suppliers) {
			if (s.capacity === undefined) continue;
			const lpAmount = batch.reduce((a, i) => a + (pairQuantity.get(`${s.ref}|${i}`) ?? 0), 0);
			capacityLeft.set(s.ref, Math.max(0, lpAmount + free.get(s.ref)!));
		}
		const usedBy = (candidate: AwardLine[]) => {
			const totals = new Map<string, number>();
			for (const l of candidate) add(totals, l.supplier, l.quantity);
			return totals;
		};
		let partLines = lagrangian.candidates[k] ?? null;
		if (partLines) {
			const totals = usedBy(partLines);
			const fits = [...capacityLeft].every(
				([s, cap]) => (totals.get(s) ?? 0) <= cap + TOLERANCE * Math.max(1, cap)
			);
			if (!fits) partLines = null;
		}
		if (!partLines) {
			part.suppliers = part.suppliers.map((s) =>
				s.capacity === undefined ? s : { ...s, capacity: capacityLeft.get(s.ref)! }
			);
			const partModel = buildModel(part);
			const outcome = await solver.solve(partModel, options);
			if (outcome.status !== 'optimal' && outcome.status !== 'feasible') {
				return {
					status: outcome.status === 'infeasible' ? 'no_solution_in_time' : outcome.status,
					objective: null,
					bound: lagrangian.bound,
					gap: null,
					lines: [],
					seconds: elapsed(),
					repairedItems: repair.size,
					modelSize: size,
					uncovered: relaxed.uncovered
				};
			}
			partLines = awardLines(part, partModel, outcome.columns!, outcome.isMip);
		}
		const totals = usedBy(partLines);
		for (const [s, cap] of capacityLeft) free.set(s, cap - (totals.get(s) ?? 0));
		lines.push(...partLines);
	}
	const bound = lagrangian.bound;
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
		repairedItems: repair.size,
		modelSize: size,
		uncovered: relaxed.uncovered
	};
}

/**
 * A lower bound at least as strong as the LP's: price each capacity at its LP dual λ[s] and drop the
 * capacities (Lagrangian relaxation). Then every item stands alone; for an item kept from the LP its LP
 * split is already optimal, and each repaired item is solved exactly as a small MIP at prices c + λ:
 *   bound = LP + Σ_repaired (MIP_i(c + λ) - LP_i(c + λ)).
 * Rules that read spend would change with the prices, so with those the LP bound is kept.
 */
async function lagrangianBatches(
	problem: AwardProblem,
	relaxed: AwardModel,
	lp: SolveOutcome,
	batches: string[][],
	solver: Solver,
	options: SolveOptions,
	subproblem: (items: string[]) => AwardProblem
): Promise<{ bound: number; candidates: (AwardLine[] | null)[] }> {
	const lpBound = lp.objective!;
	const readsSpend = problem.rules.some(
		(r) =>
			r.type === 'max_spend' || ((r.type === 'max_share' || r.type === 'min_share') && r.basis === 'spend')
	);
	if (!batches.length || readsSpend || !lp.rowDuals) return { bound: lpBound, candidates: [] };
	const price = new Map<string, number>();
	relaxed.rows.forEach((meaning, row) => {
		if (meaning.kind === 'capacity') price.set(meaning.supplier, Math.max(0, -lp.rowDuals![row]!));
	});
	const lambda = (s: string) => price.get(s) ?? 0;
	// The LP's cost of each item at prices c + λ (a bundle's counted on its first item; batches keep a
	// bundle's items together).
	const lpCost = new Map<string, number>();
	relaxed.columns.forEach((c, j) => {
		const value = lp.columns![j]!;
		if (value <= 0) return;
		if (c.kind === 'tier') {
			const bid = problem.bids[c.bid]!;
			lpCost.set(
				bid.item,
				(lpCost.get(bid.item) ?? 0) + value * (c.step ?? 1) * (c.unitPrice + lambda(bid.supplier))
			);
		}
		if (c.kind === 'bundle') {
			const bundle = problem.bundles[c.bundle]!;
			const first = bundle.items[0]!.item;
			const cost =
				value * (bundle.price + lambda(bundle.supplier) * bundle.items.reduce((a, l) => a + l.quantity, 0));
			lpCost.set(first, (lpCost.get(first) ?? 0) + cost);
		}
	});
	// Without capacities the items are independent, so a batch's MIP bound is the sum of its items'.
	const results = await Promise.all(
		batches.map(async (items) => {
			const plain = {
				...subproblem(items),
				suppliers: problem.suppliers.map(({ capacity: _capacity, ...rest }) => rest)
			};
			const pricedPart: AwardProblem = {
				...plain,
				bids: plain.bids.map((b) => ({
					...b,
					unitPrice: b.unitPrice + lambda(b.supplier),
					priceBreaks: b.priceBreaks?.map((p) => ({ ...p, unitPrice: p.unitPrice + lambda(b.supplier) }))
				})),
				bundles: plain.bundles.map((b) => ({
					...b,
					price: b.price + lambda(b.supplier) * b.items.reduce((a, l) => a + l.quantity, 0)
				}))
			};
			const outcome = await solver.solve(buildModel(pricedPart), options);
			if (
				outcome.bound === null ||
				!outcome.columns ||
				(outcome.status !== 'optimal' && outcome.status !== 'feasible')
			) {
				return { gain: 0, candidate: null };
			}
			const atLp = items.reduce((sum, i) => sum + (lpCost.get(i) ?? 0), 0);
			// Same structure, original prices: the columns read as the candidate's lines at cost c.
			const candidate = awardLines(plain, buildModel(plain), outcome.columns, outcome.isMip);
			return { gain: Math.max(0, outcome.bound - atLp), candidate };
		})
	);
	return {
		bound: lpBound + results.reduce((a, r) => a + r.gain, 0),
		candidates: results.map((r) => r.candidate)
	};
}
