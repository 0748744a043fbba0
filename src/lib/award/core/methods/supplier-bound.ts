// A lower bound that keeps each supplier whole (method `lagrangian`, beside the bound over item blocks):
// the Lagrangian relaxation of the cover rows, as for capacitated facility location (Geoffrion 1974,
// Mathematical Programming Study 2; Fisher 1981, Management Science 27(1); Cornuéjols, Sridharan and
// Thizy 1991, EJOR 50; all cited from memory). It works on the problem, reading from the model only
// its rows (a rule's row, its items and suppliers) and the LP duals on them as the first prices.
//
// Each covered item's row Σ_s q(s,i) >= d[i] is priced at u[i] >= 0; every row that joins suppliers
// (shares of a tag or over a lot or the event, spend caps, supplier counts per item) is priced at
// λ[r] >= 0 in its <= form Σ_k (α[r,k]·q_k + β[r,k]·spend_k) <= b[r], k over supplier-item pairs.
// What stays with each supplier s: its capacity K[s], the most U[s,i] it can get of each item (bid limit,
// the item's most, capacity, a share cap of s alone on the item, exclusions) and its fixed cost F[s];
// "s wins part of i" enters as its LP y >= q/U (a count per item, a fixed cost per supplier and item),
// and a minimum award and a tier's range are dropped. Open, s solves a continuous knapsack
//   O[s] = min Σ_i r[s,i]·q[s,i],  0 <= q <= U[s,i],  Σ_i q <= K[s],
//   r[s,i] = min_t price[t]·(1 + Σ_r λ[r]β[r,s,i]) + Σ_r λ[r]α[r,s,i] + f[s,i]/U[s,i] − u[i]
// (min over the bid's tiers: whichever tier a quantity is priced at, it costs at least that), a lower
// bound on its part of the Lagrangian, and V[s] = F[s] + O[s]. The event's supplier count L <= |S| <= M
// and the implied cover Σ_{s∈S} min(K[s], Σ_i U[s,i]) >= Σ_i d[i] are kept exactly in the choice of S:
//   L(u, λ) = Σ_i u[i]·d[i] − Σ_r λ[r]·b[r] + min_S Σ_{s∈S} V[s]   <=   the optimum, for any u, λ >= 0.
// Because S is chosen whole, the bound sees the event count and fixed costs per supplier, which the LP
// (with its fractional "s wins part of the event") does not. u and λ improve by Polyak subgradient
// steps; each evaluation is one pass over the bids, so thousands fit in seconds.
//
// Not kept, hence dropped (a relaxation of a relaxation is still a bound): minimum awards and minimum
// counts per item, lot counts, quantities fixed by hand, whole units. Bundles cover items with
// quantities of their own: a problem with bundles gets no bound here (null).
import type { AwardModel } from '../model';
import { referencePrices, tiersOf } from '../prices';
import type { AwardProblem, Scope, Who } from '../problem';
import { stepsOf } from '../units';

/** Supplier-item pairs and the relaxed rows, in flat arrays: one evaluation is one pass over them. */
interface Relaxation {
	items: number;
	demand: Float64Array;
	/** Pairs of each supplier: pairStart[s] .. pairStart[s+1]. */
	pairStart: Int32Array;
	pairItem: Int32Array;
	pairUpper: Float64Array;
	/** Cost per unit that does not depend on the prices: a fixed cost per supplier and item over U. */
	pairExtra: Float64Array;
	tierStart: Int32Array;
	tierPrice: Float64Array;
	/** Relaxed rows' terms per pair: entryStart[k] .. entryStart[k+1]. */
	entryStart: Int32Array;
	entryRow: Int32Array;
	entryQuantity: Float64Array;
	entrySpend: Float64Array;
	rowBound: Float64Array;
	rowScale: Float64Array;
	/** Each relaxed row's row in the model, and whether it is a floor (>= in the model). */
	rowModel: number[];
	rowFloor: boolean[];
	fixedCost: Float64Array;
	/** The most a supplier can get in all: min(K[s], Σ_i U[s,i]). */
	supplierMost: Float64Array;
	/** Suppliers with at least one pair (the ones an event count counts). */
	bidder: Uint8Array;
	countMin: number;
	countMax: number;
}

const isItemScope = (scope: Scope) => scope === 'each_item' || (typeof scope === 'object' && 'item' in scope);

function itemsOfScope(problem: AwardProblem, scope: Scope): string[] {
	if (scope === 'each_item' || scope === 'event') return problem.items.map((i) => i.ref);
	if ('item' in scope) return [scope.item];
	return problem.items.filter((i) => i.lot === scope.lot).map((i) => i.ref);
}

function suppliersOfWho(problem: AwardProblem, who: Who): string[] {
	if (who === 'each_supplier') return problem.suppliers.map((s) => s.ref);
	if ('supplier' in who) return [who.supplier];
	return problem.suppliers.filter((s) => s.tags?.includes(who.tag)).map((s) => s.ref);
}

/** The relaxation of a problem, or null when it has bundles (not kept per supplier here). */
export function supplierRelaxation(problem: AwardProblem, model: AwardModel): Relaxation | null {
	if (problem.bundles.length) return null;
	const itemIndex = new Map<string, number>();
	const demand: number[] = [];
	const coverRow: number[] = [];
	model.rows.forEach((meaning, r) => {
		if (meaning.kind !== 'cover') return;
		itemIndex.set(meaning.item, demand.length);
		demand.push(model.rowLower[r]!);
		coverRow.push(r);
	});
	const supplierIndex = new Map(problem.suppliers.map((s, k) => [s.ref, k]));
	const { most } = stepsOf(problem);
	// Supplier-item positions by number (a 10,000 x 50 event has half a million): no string keys.
	const anyItem = new Map(problem.items.map((i, k) => [i.ref, k]));
	const pairKey = (s: string, i: string) => supplierIndex.get(s)! * anyItem.size + anyItem.get(i)!;
	// The most each pair can get, from the rules kept per supplier.
	const cap = new Map<number, number>();
	const lower = (s: string, i: string, amount: number) =>
		cap.set(pairKey(s, i), Math.min(cap.get(pairKey(s, i)) ?? Infinity, amount));
	const fixedCost = new Float64Array(problem.suppliers.length);
	const fixedPerItem = new Map<string, number>();
	let countMin = 0;
	let countMax = Infinity;
	for (const rule of problem.rules) {
		if (rule.type === 'max_share' && (rule.basis ?? 'quantity') === 'quantity' && isItemScope(rule.scope)) {
			if (rule.who !== 'each_supplier' && !('supplier' in rule.who)) continue;
			for (const s of suppliersOfWho(problem, rule.who))
				for (const i of itemsOfScope(problem, rule.scope))
					if (itemIndex.has(i)) lower(s, i, (rule.percent / 100) * demand[itemIndex.get(i)!]!);
		}
		if (rule.type === 'exclude')
			for (const s of suppliersOfWho(problem, rule.who))
				for (const i of itemsOfScope(problem, rule.scope)) lower(s, i, 0);
		if (rule.type === 'supplier_count' && rule.scope === 'event') {
			countMin = Math.max(countMin, rule.min ?? 0);
			countMax = Math.min(countMax, rule.max ?? Infinity);
		}
		if (rule.type === 'award_fixed_cost')
			for (const s of rule.who ? [rule.who.supplier] : problem.suppliers.map((x) => x.ref)) {
				if (rule.per === 'supplier') fixedCost[supplierIndex.get(s)!]! += rule.amount;
				else fixedPerItem.set(s, (fixedPerItem.get(s) ?? 0) + rule.amount);
			}
	}
	// Pairs grouped by supplier (one bid per supplier and item).
	const bidsOf: number[][] = problem.suppliers.map(() => []);
	problem.bids.forEach((bid, b) => {
		if (itemIndex.has(bid.item)) bidsOf[supplierIndex.get(bid.supplier)!]!.push(b);
	});
	const pairCount = bidsOf.reduce((a, list) => a + list.length, 0);
	const pairStart = new Int32Array(problem.suppliers.length + 1);
	const pairItem = new Int32Array(pairCount);
	const pairUpper = new Float64Array(pairCount);
	const pairExtra = new Float64Array(pairCount);
	const tierStart = new Int32Array(pairCount + 1);
	const tierPrice: number[] = [];
	const supplierMost = new Float64Array(problem.suppliers.length);
	const bidder = new Uint8Array(problem.suppliers.length);
	const pairOf = new Map<number, number>();
	let k = 0;
	problem.suppliers.forEach((supplier, s) => {
		pairStart[s] = k;
		let total = 0;
		for (const b of bidsOf[s]!) {
			const bid = problem.bids[b]!;
			const upper = Math.max(
				0,
				Math.min(
					bid.maxQuantity ?? Infinity,
					most.get(bid.item)!,
					supplier.capacity ?? Infinity,
					cap.get(pairKey(supplier.ref, bid.item)) ?? Infinity
				)
			);
			pairItem[k] = itemIndex.get(bid.item)!;
			pairUpper[k] = upper;
			// A fixed cost f per supplier and item is at least f·q/U (the win's LP value).
			const perItem = fixedPerItem.get(supplier.ref) ?? 0;
			pairExtra[k] = perItem && upper > 0 ? perItem / upper : 0;
			tierStart[k] = tierPrice.length;
			for (const tier of tiersOf(bid)) if (tier.from <= upper + 1e-9) tierPrice.push(tier.unitPrice);
			pairOf.set(pairKey(supplier.ref, bid.item), k);
			total += upper;
			bidder[s] = 1;
			k++;
		}
		supplierMost[s] = Math.min(supplier.capacity ?? Infinity, total);
	});
	pairStart[problem.suppliers.length] = k;
	tierStart[pairCount] = tierPrice.length;
	const relaxed = relaxedRows(
		problem,
		model,
		itemIndex,
		(s, i) => pairOf.get(pairKey(s, i)),
		pairUpper,
		pairCount
	);
	return {
		items: demand.length,
		demand: Float64Array.from(demand),
		pairStart,
		pairItem,
		pairUpper,
		pairExtra,
		tierStart,
		tierPrice: Float64Array.from(tierPrice),
		...relaxed,
		fixedCost,
		supplierMost,
		bidder,
		countMin,
		countMax
	};
}

/**
 * The rows priced by λ, read from the model's rule rows (their rule, items and suppliers), each in its
 * <= form with its model row (for the LP dual that starts its price):
 *   quantity share:  ±(Σ_{s∈W,i∈G} q − p·Σ_{i∈G} d[i]) <= 0
 *   spend share:     ±Σ_{i∈G} Σ_s (1[s∈W] − p)·spend(s,i) <= 0      (− for a floor)
 *   spend cap:       Σ_{s∈W,i∈G} spend(s,i) <= amount
 *   count per item:  Σ_s q(s,i)/U[s,i] <= max                      (y >= q/U, so implied by the count)
 */
function relaxedRows(
	problem: AwardProblem,
	model: AwardModel,
	itemIndex: Map<string, number>,
	pairOf: (supplier: string, item: string) => number | undefined,
	pairUpper: Float64Array,
	pairCount: number
) {
	const reference = referencePrices(problem);
	// Terms as parallel lists (a row over the event has one per bid): pair, row, per unit and per spend.
	const entryPair: number[] = [];
	const entryRow: number[] = [];
	const entryQuantity: number[] = [];
	const entrySpend: number[] = [];
	const rowBound: number[] = [];
	const rowScale: number[] = [];
	const rowModel: number[] = [];
	const rowFloor: boolean[] = [];
	const bidders = problem.suppliers.map((s) => s.ref);
	model.rows.forEach((meaning, r) => {
		if (meaning.kind !== 'rule') return;
		const rule = problem.rules[meaning.rule]!;
		const priced =
			rule.type === 'max_share' ||
			rule.type === 'min_share' ||
			rule.type === 'max_spend' ||
			(rule.type === 'supplier_count' && isItemScope(rule.scope) && rule.max !== undefined);
		if (!priced) return;
		const items = meaning.items.filter((i) => itemIndex.has(i));
		const demand = items.reduce((a, i) => a + model.rowLower[coverOf(model, i, itemIndex)]!, 0);
		const value = items.reduce(
			(a, i) => a + (reference.get(i) ?? 1) * model.rowLower[coverOf(model, i, itemIndex)]!,
			0
		);
		const row = rowBound.length;
		const add = (s: string, i: string, quantity: number, spend: number) => {
			const pair = pairOf(s, i);
			if (pair === undefined || !(quantity || spend)) return;
			entryPair.push(pair);
			entryRow.push(row);
			entryQuantity.push(quantity);
			entrySpend.push(spend);
		};
		const who = new Set(meaning.suppliers);
		if (rule.type === 'max_share' || rule.type === 'min_share') {
			const sign = rule.type === 'max_share' ? 1 : -1;
			const p = rule.percent / 100;
			if ((rule.basis ?? (isItemScope(rule.scope) ? 'quantity' : 'spend')) === 'quantity') {
				for (const s of who) for (const i of items) add(s, i, sign, 0);
				rowBound.push(sign * p * demand);
				rowScale.push(Math.max(1, demand));
			} else {
				for (const s of bidders) for (const i of items) add(s, i, 0, sign * ((who.has(s) ? 1 : 0) - p));
				rowBound.push(0);
				rowScale.push(Math.max(1, value));
			}
		} else if (rule.type === 'max_spend') {
			for (const s of who) for (const i of items) add(s, i, 0, 1);
			rowBound.push(rule.amount);
			rowScale.push(Math.max(1, value));
		} else if (rule.type === 'supplier_count' && isItemScope(rule.scope) && rule.max !== undefined) {
			for (const s of who) {
				const pair = pairOf(s, items[0]!);
				if (pair !== undefined && pairUpper[pair]! > 0) add(s, items[0]!, 1 / pairUpper[pair]!, 0);
			}
			rowBound.push(rule.max);
			rowScale.push(Math.max(1, rule.max));
		} else return;
		rowModel.push(r);
		rowFloor.push(rule.type === 'min_share');
	});
	// Grouped by pair (a counting sort).
	const entryStart = new Int32Array(pairCount + 1);
	for (const pair of entryPair) entryStart[pair + 1]! += 1;
	for (let k = 0; k < pairCount; k++) entryStart[k + 1]! += entryStart[k]!;
	const next = entryStart.slice(0, pairCount);
	const rows = new Int32Array(entryPair.length);
	const quantities = new Float64Array(entryPair.length);
	const spends = new Float64Array(entryPair.length);
	entryPair.forEach((pair, e) => {
		const at = next[pair]!++;
		rows[at] = entryRow[e]!;
		quantities[at] = entryQuantity[e]!;
		spends[at] = entrySpend[e]!;
	});
	return {
		entryStart,
		entryRow: rows,
		entryQuantity: quantities,
		entrySpend: spends,
		rowBound: Float64Array.from(rowBound),
		rowScale: Float64Array.from(rowScale),
		rowModel,
		rowFloor
	};
}

const coverRows = new WeakMap<AwardModel, Map<string, number>>();
function coverOf(model: AwardModel, item: string, itemIndex: Map<string, number>): number {
	let rows = coverRows.get(model);
	if (!rows) {
		rows = new Map();
		model.rows.forEach((m, r) => m.kind === 'cover' && rows!.set(m.item, r));
		coverRows.set(model, rows);
	}
	return itemIndex.has(item) ? rows.get(item)! : -1;
}

/** Prices of the relaxed rows: u per covered item, λ per relaxed row, all >= 0. */
export interface SupplierPrices {
	cover: Float64Array;
	rows: Float64Array;
}

export interface SupplierEvaluation {
	/** L(u, λ): a lower bound on the optimum. */
	bound: number;
	/** The suppliers the choice opened, by position in problem.suppliers. */
	opened: number[];
	/** Subgradient: d[i] − Σ_{s∈S} q(s,i) per item, and the row minus its bound per relaxed row. */
	coverSlack: Float64Array;
	rowExcess: Float64Array;
}

const newScratch = (pairs: number) => ({
	reduced: new Float64Array(pairs),
	tierUsed: new Int32Array(pairs),
	quantity: new Float64Array(pairs)
});
const scratchOf = new WeakMap<Relaxation, ReturnType<typeof newScratch>>();

/** Grid of the cover constraint in the choice of suppliers (capacities rounded up to it: still a bound). */
const COVER_GRID = 1000;

/** L(u, λ), with the suppliers chosen and the subgradient. Null when no choice of suppliers covers the demand. */
export function evaluate(relaxation: Relaxation, prices: SupplierPrices): SupplierEvaluation | null {
	const x = relaxation;
	const suppliers = x.fixedCost.length;
	const pairs = x.pairItem.length;
	const rowCount = x.rowBound.length;
	// Per pair: the reduced cost per unit, the tier it was priced at and the quantity taken, in arrays
	// kept between evaluations (hundreds of steps would otherwise leave megabytes each to collect).
	const scratch = (scratchOf.get(x) ?? scratchOf.set(x, newScratch(pairs)).get(x))!;
	const { reduced, tierUsed, quantity } = scratch;
	quantity.fill(0);
	for (let k = 0; k < pairs; k++) {
		let alpha = 0;
		let beta = 0;
		for (let e = x.entryStart[k]!; e < x.entryStart[k + 1]!; e++) {
			const lambda = prices.rows[x.entryRow[e]!]!;
			alpha += lambda * x.entryQuantity[e]!;
			beta += lambda * x.entrySpend[e]!;
		}
		let best = Infinity;
		for (let t = x.tierStart[k]!; t < x.tierStart[k + 1]!; t++) {
			const price = x.tierPrice[t]! * (1 + beta);
			if (price < best) {
				best = price;
				tierUsed[k] = t;
			}
		}
		reduced[k] = best + alpha + x.pairExtra[k]! - prices.cover[x.pairItem[k]!]!;
	}
	// Each supplier's continuous knapsack.
	const open = new Float64Array(suppliers);
	const order: number[] = [];
	for (let s = 0; s < suppliers; s++) {
		order.length = 0;
		let wanted = 0;
		for (let k = x.pairStart[s]!; k < x.pairStart[s + 1]!; k++)
			if (reduced[k]! < 0 && x.pairUpper[k]! > 0) {
				order.push(k);
				wanted += x.pairUpper[k]!;
			}
		const room = x.supplierMost[s]!;
		if (wanted > room) order.sort((a, b) => reduced[a]! - reduced[b]!);
		let left = room;
		let value = 0;
		for (const k of order) {
			if (left <= 0) break;
			const q = Math.min(x.pairUpper[k]!, left);
			quantity[k] = q;
			value += reduced[k]! * q;
			left -= q;
		}
		open[s] = x.fixedCost[s]! + value;
	}
	const opened = chooseSuppliers(x, open);
	if (!opened) return null;
	let bound = 0;
	for (let i = 0; i < x.items; i++) bound += prices.cover[i]! * x.demand[i]!;
	for (let r = 0; r < rowCount; r++) bound -= prices.rows[r]! * x.rowBound[r]!;
	const coverSlack = Float64Array.from(x.demand);
	const rowExcess = new Float64Array(rowCount);
	for (let r = 0; r < rowCount; r++) rowExcess[r] = -x.rowBound[r]!;
	for (const s of opened) {
		bound += open[s]!;
		for (let k = x.pairStart[s]!; k < x.pairStart[s + 1]!; k++) {
			const q = quantity[k]!;
			if (q === 0) continue;
			coverSlack[x.pairItem[k]!]! -= q;
			const price = x.tierPrice[tierUsed[k]!]!;
			for (let e = x.entryStart[k]!; e < x.entryStart[k + 1]!; e++)
				rowExcess[x.entryRow[e]!]! += q * (x.entryQuantity[e]! + x.entrySpend[e]! * price);
		}
	}
	return { bound, opened, coverSlack, rowExcess };
}

const dpTables = new WeakMap<Relaxation, { from: Int32Array; best: Float64Array; next: Float64Array }>();

/** The dynamic programme's tables of a relaxation, at least this large, made once. */
function dpScratch(x: Relaxation, fromLength: number, size: number) {
	let tables = dpTables.get(x);
	if (!tables || tables.from.length < fromLength || tables.best.length < size) {
		tables = { from: new Int32Array(fromLength), best: new Float64Array(size), next: new Float64Array(size) };
		dpTables.set(x, tables);
	}
	return tables;
}

/**
 * The suppliers to open: min Σ_{s∈S} V[s] with countMin <= |S| <= countMax among the bidders and
 * Σ_{s∈S} most[s] >= Σ_i d[i]. The cheapest V first is optimal when it covers; otherwise a dynamic
 * programme over (suppliers opened, demand covered), the supplier totals rounded up to COVER_GRID steps
 * of the demand (a weaker cover, so still a bound). Null when no choice covers.
 */
function chooseSuppliers(x: Relaxation, open: Float64Array): number[] | null {
	const candidates: number[] = [];
	for (let s = 0; s < open.length; s++) if (x.bidder[s]) candidates.push(s);
	candidates.sort((a, b) => open[a]! - open[b]!);
	const most = Math.min(x.countMax, candidates.length);
	if (x.countMin > most) return null;
	const greedy: number[] = [];
	for (const s of candidates)
		if (greedy.length < x.countMin || (greedy.length < most && open[s]! < 0)) greedy.push(s);
	let demand = 0;
	for (let i = 0; i < x.items; i++) demand += x.demand[i]!;
	const covered = greedy.reduce((a, s) => a + x.supplierMost[s]!, 0);
	if (demand <= 0 || covered >= demand) return greedy;
	const width = COVER_GRID + 1;
	const size = (most + 1) * width;
	// The tables are reused from step to step: new ones each step (megabytes outside the JavaScript
	// heap, collected late) raised the peak memory of a 10,000 x 50 solve by about 500 MB.
	const scratch = dpScratch(x, candidates.length * size, size);
	let best = scratch.best.subarray(0, size).fill(Infinity);
	let next = scratch.next.subarray(0, size);
	best[0] = 0;
	// from[n·size + cell]: the cell before candidate n was taken to reach cell, or -1 (not taken).
	const from = scratch.from.subarray(0, candidates.length * size).fill(-1);
	candidates.forEach((s, n) => {
		const units = Math.min(COVER_GRID, Math.ceil((x.supplierMost[s]! / demand) * COVER_GRID - 1e-12));
		next.set(best);
		for (let count = most - 1; count >= 0; count--)
			for (let c = 0; c < width; c++) {
				const value = best[count * width + c]!;
				if (value === Infinity) continue;
				const to = (count + 1) * width + Math.min(COVER_GRID, c + units);
				if (value + open[s]! < next[to]!) {
					next[to] = value + open[s]!;
					from[n * size + to] = count * width + c;
				}
			}
		[best, next] = [next, best];
	});
	let cell = -1;
	for (let count = x.countMin; count <= most; count++) {
		const end = count * width + COVER_GRID;
		if (best[end]! < Infinity && (cell < 0 || best[end]! < best[cell]!)) cell = end;
	}
	if (cell < 0) return null;
	const opened: number[] = [];
	for (let n = candidates.length - 1; n >= 0 && cell > 0; n--) {
		const before = from[n * size + cell]!;
		if (before < 0) continue;
		opened.push(candidates[n]!);
		cell = before;
	}
	return opened;
}

/** The first prices: the LP duals on the cover rows and the relaxed rows (engine's sign: d cost / d bound). */
export function startingPrices(
	relaxation: Relaxation,
	model: AwardModel,
	duals: Float64Array | null
): SupplierPrices {
	const cover = new Float64Array(relaxation.items);
	const rows = new Float64Array(relaxation.rowBound.length);
	if (!duals) return { cover, rows };
	let i = 0;
	model.rows.forEach((meaning, r) => {
		if (meaning.kind === 'cover') cover[i++] = Math.max(0, duals[r]!);
	});
	relaxation.rowModel.forEach((r, k) => {
		// A floor's dual is >= 0 and a cap's <= 0; in the <= form both price at λ >= 0.
		rows[k] = Math.max(0, relaxation.rowFloor[k] ? duals[r]! : -duals[r]!);
	});
	return { cover, rows };
}

export interface SupplierBound {
	bound: number;
	/** The suppliers opened at the best prices, by position in problem.suppliers. */
	opened: number[];
	/** Evaluations made (each one pass over the bids). */
	steps: number;
	/** The prices of the best bound, to go on from. */
	prices: SupplierPrices;
}

export interface SupplierBoundLimits {
	/** Stop after this many seconds (checked between steps). */
	seconds: number;
	/** Most evaluations. */
	steps?: number;
	/** Stop once (target − bound) / target is at most this. */
	gap?: number;
	/** Let the event loop run every this many seconds (the engine shares a thread with a server). */
	yieldEvery?: number;
	/** Prices to start from (an earlier run's best) instead of the duals. */
	start?: SupplierPrices;
}

/** Evaluations without a better bound before the step factor halves, and the factor that ends the steps. */
const PATIENCE = 20;
const SMALLEST_FACTOR = 1e-4;

/**
 * The best L(u, λ) found by Polyak subgradient steps (Held, Wolfe and Crowder 1974, Mathematical
 * Programming 6) from the given prices toward `target` (an award's cost): each row is measured relative
 * to its size (units of an item, money, counts), prices are kept >= 0. Null when the problem has rules
 * this bound cannot keep or relax (bundles), or no choice of suppliers covers the demand.
 */
export async function supplierBound(
	problem: AwardProblem,
	model: AwardModel,
	duals: Float64Array | null,
	target: number,
	limits: SupplierBoundLimits
): Promise<SupplierBound | null> {
	const relaxation = supplierRelaxation(problem, model);
	if (!relaxation) return null;
	const began = performance.now();
	const seconds = () => (performance.now() - began) / 1000;
	let prices = limits.start ?? startingPrices(relaxation, model, duals);
	let current = evaluate(relaxation, prices);
	if (!current) return null;
	let best = { bound: current.bound, opened: current.opened, prices };
	const gapOf = (b: number) => (target - b) / Math.max(1e-9, Math.abs(target));
	const coverScale = relaxation.demand.map((d) => Math.max(1, d));
	let factor = 1;
	let since = 0;
	let lastYield = 0;
	let steps = 1;
	const most = limits.steps ?? Infinity;
	while (steps < most && seconds() < limits.seconds && factor >= SMALLEST_FACTOR) {
		if (gapOf(best.bound) <= (limits.gap ?? 0)) break;
		let norm = 0;
		current.coverSlack.forEach((g, i) => {
			// A price at 0 with the row over-covered cannot move down: that part is no ascent direction.
			if (prices.cover[i] === 0 && g < 0) current!.coverSlack[i] = 0;
			else norm += (g / coverScale[i]!) ** 2;
		});
		current.rowExcess.forEach((g, r) => {
			if (prices.rows[r] === 0 && g < 0) current!.rowExcess[r] = 0;
			else norm += (g / relaxation.rowScale[r]!) ** 2;
		});
		if (norm === 0) break;
		const size = (factor * Math.max(0, target - current.bound)) / norm;
		if (!(size > 0)) break;
		const next: SupplierPrices = {
			cover: prices.cover.map((u, i) =>
				Math.max(0, u + (size * current!.coverSlack[i]!) / coverScale[i]! ** 2)
			),
			rows: prices.rows.map((l, r) =>
				Math.max(0, l + (size * current!.rowExcess[r]!) / relaxation.rowScale[r]! ** 2)
			)
		};
		const evaluation = evaluate(relaxation, next);
		steps++;
		if (!evaluation) break;
		prices = next;
		current = evaluation;
		if (evaluation.bound > best.bound) {
			best = { bound: evaluation.bound, opened: evaluation.opened, prices };
			since = 0;
		} else if (++since >= PATIENCE) {
			factor /= 2;
			since = 0;
		}
		if (seconds() - lastYield >= (limits.yieldEvery ?? 0.05)) {
			lastYield = seconds();
			await new Promise((resolve) => setTimeout(resolve, 0));
		}
	}
	return { ...best, steps };
}
