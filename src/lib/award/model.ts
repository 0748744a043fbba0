// The award model: the problem written as a (mixed-integer) linear program in arrays, with a record of
// what every column and row means so results and explanations can speak in the trade's words.
//
// Notation: d[i] demand of item i; x[b,t] quantity on tier t of bid b (tier 0 is the plain unit price,
// tier t >= 1 a price break, all-units); z[b,t] in {0,1} "tier t of bid b is used"; w[k] in {0,1}
// "bundle k is taken"; y[s,i] in {0,1} "s wins part of i"; v[s,G] in {0,1} "s wins part of group G".
// q(s,i) = Σ_t x[b(s,i),t] + Σ_k q[k,i]·w[k] is the quantity of i awarded to s.
import type { AwardProblem, AwardRule, Scope, Who } from './problem';

export type ColumnMeaning =
	| { kind: 'tier'; bid: number; tier: number; unitPrice: number }
	| { kind: 'tier_used'; bid: number; tier: number }
	| { kind: 'bundle'; bundle: number }
	| { kind: 'wins'; supplier: string; item: string }
	| { kind: 'wins_group'; supplier: string; group: string }
	| { kind: 'slack'; row: number };

export type RowMeaning =
	| { kind: 'cover'; item: string }
	| { kind: 'capacity'; supplier: string }
	| { kind: 'rule'; rule: number; items: string[]; suppliers: string[]; unit: 'quantity' | 'spend' | 'count' }
	| { kind: 'structure' };

export interface AwardModel {
	numCols: number;
	numRows: number;
	colCost: Float64Array;
	colLower: Float64Array;
	colUpper: Float64Array;
	integrality: Int32Array;
	rowLower: Float64Array;
	rowUpper: Float64Array;
	/** Compressed sparse columns. */
	starts: Int32Array;
	indices: Int32Array;
	values: Float64Array;
	columns: ColumnMeaning[];
	rows: RowMeaning[];
	integers: number;
	/** Items left out of the cover rule, with the reason. */
	uncovered: { item: string; reason: string }[];
	/** Whether every row of a rule, cover and capacity has a penalised slack (for conflicts). */
	elastic: boolean;
}

export interface BuildOptions {
	/** Feasibility relaxation: each rule, cover and capacity row gets a slack; the objective is their sum. */
	elastic?: boolean;
	/** Leave these rules out (by index in problem.rules), for rule costs. */
	withoutRules?: ReadonlySet<number>;
}

/** Linear terms as flat (column, coefficient) pairs; repeated columns are summed when the model is finished. */
type Terms = number[];

function addTerm(terms: Terms, column: number, coefficient: number): void {
	if (coefficient !== 0) terms.push(column, coefficient);
}

function addAll(into: Terms, from: Terms | undefined, factor = 1): void {
	if (!from) return;
	for (let k = 0; k < from.length; k += 2) addTerm(into, from[k]!, from[k + 1]! * factor);
}

class Builder {
	// Column data in typed arrays that double when full: a model of 350k bids makes no garbage here.
	cost: Float64Array;
	lower: Float64Array;
	upper: Float64Array;
	integer: Uint8Array;
	readonly columns: ColumnMeaning[] = [];
	readonly rowTerms: Terms[] = [];
	readonly rowLower: number[] = [];
	readonly rowUpper: number[] = [];
	readonly rows: RowMeaning[] = [];

	constructor(expectedColumns: number) {
		const size = Math.max(16, expectedColumns);
		this.cost = new Float64Array(size);
		this.lower = new Float64Array(size);
		this.upper = new Float64Array(size);
		this.integer = new Uint8Array(size);
	}

	column(meaning: ColumnMeaning, cost: number, lower: number, upper: number, integer = false): number {
		const j = this.columns.length;
		if (j === this.cost.length) {
			const grow = <T extends Float64Array | Uint8Array>(from: T, to: T): T => (to.set(from), to);
			this.cost = grow(this.cost, new Float64Array(2 * j));
			this.lower = grow(this.lower, new Float64Array(2 * j));
			this.upper = grow(this.upper, new Float64Array(2 * j));
			this.integer = grow(this.integer, new Uint8Array(2 * j));
		}
		this.columns.push(meaning);
		this.cost[j] = cost;
		this.lower[j] = lower;
		this.upper[j] = upper;
		this.integer[j] = integer ? 1 : 0;
		return j;
	}

	row(meaning: RowMeaning, terms: Terms, lower: number, upper: number): number {
		this.rows.push(meaning);
		this.rowTerms.push(terms);
		this.rowLower.push(lower);
		this.rowUpper.push(upper);
		return this.rows.length - 1;
	}

	finish(uncovered: AwardModel['uncovered'], elastic: boolean): AwardModel {
		const numCols = this.columns.length;
		const numRows = this.rows.length;
		// Sum repeated columns within each row (a bundle's column can reach a row through several items),
		// compacting each row's terms in place.
		const mark = new Int32Array(numCols).fill(-1);
		const at = new Int32Array(numCols);
		const merged: Terms[] = this.rowTerms;
		merged.forEach((terms, row) => {
			let end = 0;
			for (let k = 0; k < terms.length; k += 2) {
				const column = terms[k]!;
				if (mark[column] === row) terms[at[column]! + 1]! += terms[k + 1]!;
				else {
					mark[column] = row;
					at[column] = end;
					terms[end] = column;
					terms[end + 1] = terms[k + 1]!;
					end += 2;
				}
			}
			terms.length = end;
		});
		const counts = new Int32Array(numCols + 1);
		for (const terms of merged) for (let k = 0; k < terms.length; k += 2) counts[terms[k]! + 1]! += 1;
		for (let j = 0; j < numCols; j++) counts[j + 1]! += counts[j]!;
		const starts = Int32Array.from(counts);
		const next = Int32Array.from(counts.subarray(0, numCols));
		const indices = new Int32Array(starts[numCols]!);
		const values = new Float64Array(starts[numCols]!);
		merged.forEach((terms, row) => {
			for (let k = 0; k < terms.length; k += 2) {
				const position = next[terms[k]!]!++;
				indices[position] = row;
				values[position] = terms[k + 1]!;
			}
		});
		return {
			numCols,
			numRows,
			colCost: this.cost.slice(0, numCols),
			colLower: this.lower.slice(0, numCols),
			colUpper: this.upper.slice(0, numCols),
			integrality: Int32Array.from(this.integer.subarray(0, numCols)),
			rowLower: Float64Array.from(this.rowLower),
			rowUpper: Float64Array.from(this.rowUpper),
			starts,
			indices,
			values,
			columns: this.columns,
			rows: this.rows,
			integers: this.integer.subarray(0, numCols).reduce((a, b) => a + b, 0),
			uncovered,
			elastic
		};
	}
}

/** The price of each tier of a bid: tier 0 from zero, then each break from its quantity (all-units). */
export function tiersOf(bid: AwardProblem['bids'][number]): { from: number; unitPrice: number }[] {
	return [
		{ from: 0, unitPrice: bid.unitPrice },
		...(bid.priceBreaks ?? []).map((b) => ({ from: b.fromQuantity, unitPrice: b.unitPrice }))
	];
}

/** An item's reference unit price: its baseline, else the mean of its bids' unit prices, else 1. */
export function referencePrices(problem: AwardProblem): Map<string, number> {
	const sums = new Map<string, { total: number; count: number }>();
	for (const bid of problem.bids) {
		const entry = sums.get(bid.item) ?? { total: 0, count: 0 };
		entry.total += bid.unitPrice;
		entry.count += 1;
		sums.set(bid.item, entry);
	}
	const reference = new Map<string, number>();
	for (const item of problem.items) {
		const mean = sums.get(item.ref);
		reference.set(item.ref, item.baselineUnitPrice ?? ((mean && mean.total / mean.count) || 1));
	}
	return reference;
}

const referenceCache = new WeakMap<AwardProblem, Map<string, number>>();

/** Weights that split a bundle's price over its items: quantity times a reference price of the item. */
export function bundleShares(
	problem: AwardProblem,
	bundle: AwardProblem['bundles'][number]
): Map<string, number> {
	let reference = referenceCache.get(problem);
	if (!reference) referenceCache.set(problem, (reference = referencePrices(problem)));
	const weights = bundle.items.map((line) => line.quantity * (reference.get(line.item) || 1));
	const total = weights.reduce((a, b) => a + b, 0);
	return new Map(
		bundle.items.map((line, j) => [line.item, total > 0 ? weights[j]! / total : 1 / bundle.items.length])
	);
}

export function buildModel(problem: AwardProblem, options: BuildOptions = {}): AwardModel {
	const elastic = options.elastic ?? false;
	const skip = options.withoutRules ?? new Set<number>();
	const rules = problem.rules.map((rule, index) => ({ rule, index })).filter(({ index }) => !skip.has(index));
	const m = new Builder(problem.bids.length + problem.bundles.length);
	const demand = new Map(problem.items.map((i) => [i.ref, i.quantity]));
	const capacity = new Map(problem.suppliers.map((s) => [s.ref, s.capacity ?? Infinity]));

	// q(s,i) and spend(s,i) as linear terms, keyed by supplier and item position.
	const supplierIndex = new Map(problem.suppliers.map((s, k) => [s.ref, k]));
	const itemIndex = new Map(problem.items.map((i, k) => [i.ref, k]));
	const itemCount = problem.items.length;
	const key = (s: string, i: string) => supplierIndex.get(s)! * itemCount + itemIndex.get(i)!;
	// One entry per supplier and item with an offer: its quantity terms, the bundle part of its spend
	// (a price break's spend is its column's unit price, read from the cost when a rule needs it) and the
	// most it can get. Spend terms are made only for rules on spend: an LP with no rules never builds them.
	interface Pair {
		quantity: Terms;
		bundleSpend: Terms | null;
		spend: Terms | null;
		upper: number;
	}
	// Keyed by supplier x item position: a plain array while that is small enough to hold, else a map.
	const pairs: { get(k: number): Pair | undefined; set(k: number, pair: Pair): void } =
		problem.suppliers.length * itemCount <= 1 << 24
			? (() => {
					// Filled up front so the array stays in fast elements (filled out of order it would not).
					const slots: (Pair | undefined)[] = Array.from({ length: problem.suppliers.length * itemCount });
					return { get: (k) => slots[k], set: (k, pair) => void (slots[k] = pair) };
				})()
			: new Map<number, Pair>();
	const pairsOfItem: number[][] = problem.items.map(() => []);
	const offered = new Set<string>();
	const suppliersOfItem = new Map<string, string[]>();
	const pairsOfSupplier: number[][] = problem.suppliers.map(() => []);
	/** The terms of a supplier and item, made on first use. */
	const pairOf = (s: string, i: string): Pair => {
		const k = key(s, i);
		let pair = pairs.get(k);
		if (!pair) {
			pairs.set(k, (pair = { quantity: [], bundleSpend: null, spend: null, upper: 0 }));
			offered.add(i);
			let list = suppliersOfItem.get(i);
			if (!list) suppliersOfItem.set(i, (list = []));
			list.push(s);
			pairsOfSupplier[supplierIndex.get(s)!]!.push(k);
			pairsOfItem[k % itemCount]!.push(k);
		}
		return pair;
	};
	const isBundleColumn = (column: number) => m.columns[column]!.kind === 'bundle';
	const spendOf = (pair: Pair): Terms => {
		if (pair.spend) return pair.spend;
		const spend: Terms = [];
		const q = pair.quantity;
		for (let t = 0; t < q.length; t += 2) if (!isBundleColumn(q[t]!)) addTerm(spend, q[t]!, m.cost[q[t]!]!);
		addAll(spend, pair.bundleSpend ?? undefined);
		return (pair.spend = spend);
	};
	const quantityOf = (k: number): Terms | undefined => pairs.get(k)?.quantity;
	const spendTermsOf = (k: number): Terms | undefined => {
		const pair = pairs.get(k);
		return pair && spendOf(pair);
	};

	const tierUsedRows: Terms[] = [];
	problem.bids.forEach((bid, b) => {
		const d = demand.get(bid.item)!;
		// The bid's own limit bounds the column; demand and capacity only give the linking rows a finite
		// big-M (as column bounds they would distort the duals). The relaxation lets capacity give way.
		const bidLimit = bid.maxQuantity ?? Infinity;
		const ceiling = Math.min(bidLimit, d, elastic ? Infinity : (capacity.get(bid.supplier) ?? Infinity));
		const tiers = bid.priceBreaks?.length ? tiersOf(bid).filter((t) => t.from <= ceiling + 1e-9) : null;
		const pair = pairOf(bid.supplier, bid.item);
		const quantity = pair.quantity;
		pair.upper += ceiling;
		if (!tiers || tiers.length === 1) {
			const x = m.column(
				{ kind: 'tier', bid: b, tier: 0, unitPrice: bid.unitPrice },
				bid.unitPrice,
				0,
				bidLimit
			);
			addTerm(quantity, x, 1);
			return;
		}
		const oneTier: Terms = [];
		tiers.forEach((tier, t) => {
			const top = Math.min(tiers[t + 1]?.from ?? Infinity, ceiling);
			const x = m.column(
				{ kind: 'tier', bid: b, tier: t, unitPrice: tier.unitPrice },
				tier.unitPrice,
				0,
				Math.min(top, bidLimit)
			);
			const z = m.column({ kind: 'tier_used', bid: b, tier: t }, 0, 0, 1, true);
			// from[t]·z[b,t] <= x[b,t] <= top[t]·z[b,t]: a tier's price applies only to quantities in its range
			m.row({ kind: 'structure' }, [x, 1, z, -tier.from], 0, Infinity);
			m.row({ kind: 'structure' }, [x, 1, z, -top], -Infinity, 0);
			addTerm(oneTier, z, 1);
			addTerm(quantity, x, 1);
		});
		tierUsedRows.push(oneTier);
	});
	// Σ_t z[b,t] <= 1: one price tier per bid
	for (const terms of tierUsedRows) m.row({ kind: 'structure' }, terms, -Infinity, 1);

	problem.bundles.forEach((bundle, k) => {
		const w = m.column({ kind: 'bundle', bundle: k }, bundle.price, 0, 1, true);
		const shares = bundleShares(problem, bundle);
		for (const line of bundle.items) {
			const pair = pairOf(bundle.supplier, line.item);
			addTerm(pair.quantity, w, line.quantity);
			addTerm((pair.bundleSpend ??= []), w, bundle.price * shares.get(line.item)!);
			pair.upper += line.quantity;
		}
	});

	const uncovered = problem.items
		.filter((i) => !offered.has(i.ref))
		.map((i) => ({ item: i.ref, reason: 'no bid or bundle offers this item' }));
	const coveredItems = problem.items.filter((i) => offered.has(i.ref));

	// In the feasibility relaxation a slack of one unit costs its priority (rules give way before
	// capacities, capacities before covering the demand); spend is turned into units at the items'
	// reference price, and one supplier more or less weighs like the group's average demand.
	const slackRows: { row: number; direction: 1 | -1; weight: number }[] = [];
	const priority = { rule: 1, capacity: 2, cover: 4, structure: 1 };
	const referencePrice = referencePrices(problem);
	const unitWeight = (meaning: RowMeaning): number => {
		if (meaning.kind !== 'rule' || meaning.unit === 'quantity') return 1;
		const items = meaning.items.length ? meaning.items : [...demand.keys()];
		if (meaning.unit === 'count') return items.reduce((a, i) => a + demand.get(i)!, 0) / items.length;
		const value = items.reduce((a, i) => a + demand.get(i)! * (referencePrice.get(i) || 1), 0);
		const units = items.reduce((a, i) => a + demand.get(i)!, 0);
		return units / Math.max(1e-9, value);
	};
	const elasticRow = (meaning: RowMeaning, terms: Terms, lower: number, upper: number) => {
		// A rule on one continuous column (a share cap of one supplier on one item) is a bound, not a row:
		// the model stays small. The relaxation keeps it a row so that it can give way.
		const single = terms.length === 2 && terms[1]! > 0 && !m.integer[terms[0]!];
		if (!elastic && meaning.kind === 'rule' && single) {
			const [column, coefficient] = [terms[0]!, terms[1]!];
			m.upper[column] = Math.min(m.upper[column]!, upper / coefficient);
			m.lower[column] = Math.max(m.lower[column]!, lower / coefficient);
			return -1;
		}
		const row = m.row(meaning, terms, lower, upper);
		if (elastic) {
			const weight = priority[meaning.kind] * unitWeight(meaning);
			if (lower > -Infinity) slackRows.push({ row, direction: 1, weight });
			if (upper < Infinity) slackRows.push({ row, direction: -1, weight });
		}
		return row;
	};

	// Σ_s q(s,i) = d[i]: cover the demand of every item that has an offer
	for (const item of coveredItems) {
		const terms: Terms = [];
		for (const k of pairsOfItem[itemIndex.get(item.ref)!]!) addAll(terms, quantityOf(k));
		elasticRow({ kind: 'cover', item: item.ref }, terms, item.quantity, item.quantity);
	}

	// Σ_i q(s,i) <= K[s]: supplier capacity in units over all items
	for (const supplier of problem.suppliers) {
		if (supplier.capacity === undefined) continue;
		const terms: Terms = [];
		for (const k of pairsOfSupplier[supplierIndex.get(supplier.ref)!]!) addAll(terms, quantityOf(k));
		if (terms.length)
			elasticRow({ kind: 'capacity', supplier: supplier.ref }, terms, -Infinity, supplier.capacity);
	}

	// Groups a rule ranges over.
	const lotItems = (lot: string) => coveredItems.filter((i) => i.lot === lot).map((i) => i.ref);
	const scopeGroups = (scope: Scope): string[][] => {
		if (scope === 'each_item') return coveredItems.map((i) => [i.ref]);
		if (scope === 'event') return [coveredItems.map((i) => i.ref)];
		if ('item' in scope) return offered.has(scope.item) ? [[scope.item]] : [];
		return [lotItems(scope.lot)];
	};
	const groupName = (scope: Scope, items: string[]) =>
		scope === 'event'
			? 'event'
			: typeof scope === 'object' && 'lot' in scope
				? `lot:${scope.lot}`
				: `item:${items[0]}`;
	const whoGroups = (who: Who): string[][] => {
		if (who === 'each_supplier') return problem.suppliers.map((s) => [s.ref]);
		if ('supplier' in who) return [[who.supplier]];
		return [problem.suppliers.filter((s) => s.tags?.includes(who.tag)).map((s) => s.ref)];
	};
	const isItemScope = (scope: Scope) =>
		scope === 'each_item' || (typeof scope === 'object' && 'item' in scope);

	const sum = (
		termsOf: (k: number) => Terms | undefined,
		suppliers: string[],
		items: string[],
		factor = 1
	) => {
		const terms: Terms = [];
		for (const s of suppliers) for (const i of items) addAll(terms, termsOf(key(s, i)), factor);
		return terms;
	};
	const everyone = problem.suppliers.map((s) => s.ref);

	// y[s,i] and v[s,G], made once when a rule needs them.
	const wins = new Map<number, number>();
	const minimumOf = new Map<number, number>();
	for (const { rule } of rules) {
		if (rule.type !== 'min_award') continue;
		for (const items of scopeGroups(rule.scope))
			for (const suppliers of whoGroups(rule.who))
				for (const s of suppliers)
					for (const i of items) {
						const d = demand.get(i)!;
						const amount = Math.min(d, rule.quantity ?? ((rule.percentOfItem ?? 0) / 100) * d);
						minimumOf.set(key(s, i), Math.max(minimumOf.get(key(s, i)) ?? 0, amount));
					}
	}
	const winsColumn = (s: string, i: string): number | null => {
		const k = key(s, i);
		const pair = pairs.get(k);
		if (!pair) return null;
		const found = wins.get(k);
		if (found !== undefined) return found;
		const upper = Math.min(pair.upper, demand.get(i)!);
		const y = m.column({ kind: 'wins', supplier: s, item: i }, 0, 0, 1, true);
		wins.set(k, y);
		const q = pair.quantity;
		// q(s,i) <= U[s,i]·y[s,i]: any award sets y
		const over: Terms = [];
		addAll(over, q);
		addTerm(over, y, -upper);
		m.row({ kind: 'structure' }, over, -Infinity, 0);
		// q(s,i) >= m[s,i]·y[s,i]: a win is at least one unit (or the whole of a smaller item)
		const floor = Math.min(1, upper);
		const under: Terms = [];
		addAll(under, q);
		addTerm(under, y, -floor);
		m.row({ kind: 'structure' }, under, 0, Infinity);
		return y;
	};
	const groupWins = new Map<string, number>();
	const winsGroupColumn = (s: string, group: string, items: string[]): number | null => {
		const k = `${s}\u0000${group}`;
		const found = groupWins.get(k);
		if (found !== undefined) return found;
		const ys = items.map((i) => winsColumn(s, i)).filter((y): y is number => y !== null);
		if (!ys.length) return null;
		const v = m.column({ kind: 'wins_group', supplier: s, group }, 0, 0, 1, true);
		groupWins.set(k, v);
		// y[s,i] <= v[s,G] for i in G, and v[s,G] <= Σ_i y[s,i]
		for (const y of ys) m.row({ kind: 'structure' }, [y, 1, v, -1], -Infinity, 0);
		const some: Terms = [v, 1];
		for (const y of ys) addTerm(some, y, -1);
		m.row({ kind: 'structure' }, some, -Infinity, 0);
		return v;
	};

	for (const { rule, index } of rules) {
		const meaning = (
			items: string[],
			suppliers: string[],
			unit: 'quantity' | 'spend' | 'count'
		): RowMeaning => ({
			kind: 'rule',
			rule: index,
			items,
			suppliers,
			unit
		});
		switch (rule.type) {
			case 'max_share':
			case 'min_share': {
				const p = rule.percent / 100;
				const basis = rule.basis ?? (isItemScope(rule.scope) ? 'quantity' : 'spend');
				for (const items of scopeGroups(rule.scope)) {
					if (!items.length) continue;
					for (const suppliers of whoGroups(rule.who)) {
						if (!suppliers.length) continue;
						let terms: Terms;
						if (basis === 'quantity') {
							// Σ_{s∈W} Σ_{i∈G} q(s,i) <= p·Σ_{i∈G} d[i]  (>= for a share floor)
							terms = sum(quantityOf, suppliers, items);
							const total = items.reduce((a, i) => a + demand.get(i)!, 0);
							if (!terms.length && rule.type === 'max_share') continue;
							if (rule.type === 'max_share')
								elasticRow(meaning(items, suppliers, 'quantity'), terms, -Infinity, p * total);
							else elasticRow(meaning(items, suppliers, 'quantity'), terms, p * total, Infinity);
						} else {
							// Σ_{s∈W} spend(s,G) - p·Σ_all spend(·,G) <= 0  (>= 0 for a share floor)
							terms = sum(spendTermsOf, suppliers, items);
							addAll(terms, sum(spendTermsOf, everyone, items), -p);
							if (rule.type === 'max_share')
								elasticRow(meaning(items, suppliers, 'spend'), terms, -Infinity, 0);
							else elasticRow(meaning(items, suppliers, 'spend'), terms, 0, Infinity);
						}
					}
				}
				break;
			}
			case 'min_award': {
				// q(s,i) >= m·y[s,i]: if s wins part of i, at least the minimum
				for (const items of scopeGroups(rule.scope))
					for (const suppliers of whoGroups(rule.who))
						for (const s of suppliers)
							for (const i of items) {
								const y = winsColumn(s, i);
								if (y === null) continue;
								const terms: Terms = [];
								addAll(terms, quantityOf(key(s, i)));
								addTerm(terms, y, -minimumOf.get(key(s, i))!);
								elasticRow(meaning([i], [s], 'quantity'), terms, 0, Infinity);
							}
				break;
			}
			case 'supplier_count': {
				// L <= Σ_s y[s,i] <= U per item; over a lot or the event with v[s,G]
				for (const items of scopeGroups(rule.scope)) {
					if (!items.length) continue;
					const terms: Terms = [];
					const bidders = [...new Set(items.flatMap((i) => suppliersOfItem.get(i) ?? []))];
					for (const s of bidders) {
						const column =
							items.length === 1 && isItemScope(rule.scope)
								? winsColumn(s, items[0]!)
								: winsGroupColumn(s, groupName(rule.scope, items), items);
						if (column !== null) addTerm(terms, column, 1);
					}
					elasticRow(meaning(items, bidders, 'count'), terms, rule.min ?? -Infinity, rule.max ?? Infinity);
				}
				break;
			}
			case 'max_spend': {
				// Σ_{s∈W} spend(s,G) <= amount
				for (const items of scopeGroups(rule.scope))
					for (const suppliers of whoGroups(rule.who)) {
						const terms = sum(spendTermsOf, suppliers, items);
						if (terms.length) elasticRow(meaning(items, suppliers, 'spend'), terms, -Infinity, rule.amount);
					}
				break;
			}
			case 'exclude': {
				// Σ_{s∈W} Σ_{i∈G} q(s,i) <= 0
				for (const items of scopeGroups(rule.scope))
					for (const suppliers of whoGroups(rule.who)) {
						const terms = sum(quantityOf, suppliers, items);
						if (terms.length) elasticRow(meaning(items, suppliers, 'quantity'), terms, -Infinity, 0);
					}
				break;
			}
			case 'award_fixed_cost': {
				// + amount·y[s,i] (per supplier and item) or + amount·v[s,event] (per supplier) in the objective
				const all = coveredItems.map((i) => i.ref);
				for (const s of everyone) {
					if (rule.per === 'supplier_item') {
						for (const i of all) {
							const y = winsColumn(s, i);
							if (y !== null) m.cost[y]! += rule.amount;
						}
					} else {
						const v = winsGroupColumn(s, 'event', all);
						if (v !== null) m.cost[v]! += rule.amount;
					}
				}
				break;
			}
		}
	}

	if (elastic) {
		// min Σ slack: the smallest total give-way that makes the rules fit together
		m.cost.fill(0);
		for (const { row, direction, weight } of slackRows) {
			const s = m.column({ kind: 'slack', row }, weight, 0, Infinity);
			addTerm(m.rowTerms[row]!, s, direction);
		}
	}
	return m.finish(uncovered, elastic);
}

export type { AwardRule };
