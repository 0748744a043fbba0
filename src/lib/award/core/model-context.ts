// What the constraint families of the award model share while it is built: the builder, the index of
// offers (the terms of q(s,i) and spend(s,i) for every supplier and item with an offer), the groups a
// rule ranges over, and the rows that may give way in the feasibility relaxation.
import { addAll, addTerm, Builder, type RowMeaning, type Terms } from './model-builder';
import { referencePrices } from './prices';
import type { AwardProblem, Scope, Who } from './problem';
import { stepsOf } from './units';

/**
 * One supplier and item with an offer: its quantity terms, the bundle part of its spend (a price
 * break's spend is its column's unit price, read from the cost when a rule needs it) and the most it
 * can get. Spend terms are made only for rules on spend: an LP with no rules never builds them.
 */
interface Pair {
	quantity: Terms;
	bundleSpend: Terms | null;
	spend: Terms | null;
	upper: number;
}

// In the feasibility relaxation a slack of one unit costs its priority (rules give way before
// capacities, capacities before covering the demand).
const PRIORITY = { rule: 1, capacity: 2, cover: 4, structure: 1 };

export class ModelContext {
	readonly builder: Builder;
	readonly demand: Map<string, number>;
	/** The most of each item an award may hold: d[i], or more where quantities move in steps (units.ts). */
	readonly most: Map<string, number>;
	/** The step each bid's quantity moves in (by position in problem.bids), 0 when it may be any amount. */
	readonly bidStep: number[];
	readonly capacity: Map<string, number>;
	readonly itemIndex: Map<string, number>;
	readonly pairsOfItem: number[][];
	readonly pairsOfSupplier: number[][];
	readonly supplierIndex: Map<string, number>;
	/** Items with at least one offer, and the suppliers that offer each. */
	readonly offered = new Set<string>();
	readonly suppliersOfItem = new Map<string, string[]>();
	readonly everyone: string[];
	/** The offered items, in the problem's order: set by closeOffers once every offer is in. */
	coveredItems: AwardProblem['items'] = [];
	/** Rows that may give way in the relaxation: +1 a slack that raises the row, -1 one that lowers it. */
	readonly slackRows: { row: number; direction: 1 | -1; weight: number }[] = [];
	/** y[s,i] by pair key and v[s,G] by supplier and group, made once on first use. */
	readonly wins = new Map<number, number>();
	readonly groupWins = new Map<string, number>();
	/** T[G] columns, by the items of G (model-families.ts, spendTotal). */
	readonly spendTotals = new Map<string, number>();
	private readonly itemCount: number;
	// Keyed by supplier x item position: a plain array while that is small enough to hold, else a map.
	private readonly pairs: { get(k: number): Pair | undefined; set(k: number, pair: Pair): void };
	private referencePrice: Map<string, number> | undefined;

	constructor(
		readonly problem: AwardProblem,
		readonly elastic: boolean
	) {
		this.builder = new Builder(problem.bids.length + problem.bundles.length);
		this.demand = new Map(problem.items.map((i) => [i.ref, i.quantity]));
		({ bidStep: this.bidStep, most: this.most } = stepsOf(problem));
		this.capacity = new Map(problem.suppliers.map((s) => [s.ref, s.capacity ?? Infinity]));
		this.supplierIndex = new Map(problem.suppliers.map((s, k) => [s.ref, k]));
		this.itemIndex = new Map(problem.items.map((i, k) => [i.ref, k]));
		this.itemCount = problem.items.length;
		this.pairs =
			problem.suppliers.length * this.itemCount <= 1 << 24
				? (() => {
						// Filled up front so the array stays in fast elements (filled out of order it would not).
						const slots: (Pair | undefined)[] = Array.from({
							length: problem.suppliers.length * this.itemCount
						});
						return { get: (k) => slots[k], set: (k, pair) => void (slots[k] = pair) };
					})()
				: new Map<number, Pair>();
		this.pairsOfItem = problem.items.map(() => []);
		this.pairsOfSupplier = problem.suppliers.map(() => []);
		this.everyone = problem.suppliers.map((s) => s.ref);
	}

	/** The position of a supplier and item in the pair index. */
	key(s: string, i: string): number {
		return this.supplierIndex.get(s)! * this.itemCount + this.itemIndex.get(i)!;
	}

	pair(k: number): Pair | undefined {
		return this.pairs.get(k);
	}

	/** The terms of a supplier and item, made on first use. */
	pairOf(s: string, i: string): Pair {
		const k = this.key(s, i);
		let pair = this.pairs.get(k);
		if (!pair) {
			this.pairs.set(k, (pair = { quantity: [], bundleSpend: null, spend: null, upper: 0 }));
			this.offered.add(i);
			let list = this.suppliersOfItem.get(i);
			if (!list) this.suppliersOfItem.set(i, (list = []));
			list.push(s);
			this.pairsOfSupplier[this.supplierIndex.get(s)!]!.push(k);
			this.pairsOfItem[k % this.itemCount]!.push(k);
		}
		return pair;
	}

	/** Once every bid and bundle is in: the items nobody offers, with the reason, are left out of the model. */
	closeOffers(): { item: string; reason: string }[] {
		this.coveredItems = this.problem.items.filter((i) => this.offered.has(i.ref));
		return this.problem.items
			.filter((i) => !this.offered.has(i.ref))
			.map((i) => ({ item: i.ref, reason: 'no bid or bundle offers this item' }));
	}

	/** q(s,i) of a pair key. */
	readonly quantityOf = (k: number): Terms | undefined => this.pairs.get(k)?.quantity;

	/** spend(s,i) of a pair key: Σ_t price[b,t]·x[b,t] + Σ_k share[k,i]·price[k]·w[k]. */
	readonly spendTermsOf = (k: number): Terms | undefined => {
		const pair = this.pairs.get(k);
		if (!pair) return undefined;
		if (pair.spend) return pair.spend;
		const spend: Terms = [];
		const q = pair.quantity;
		const { columns, cost } = this.builder;
		for (let t = 0; t < q.length; t += 2)
			if (columns[q[t]!]!.kind !== 'bundle') addTerm(spend, q[t]!, cost[q[t]!]!);
		addAll(spend, pair.bundleSpend ?? undefined);
		return (pair.spend = spend);
	};

	/** Σ over suppliers and items of the terms termsOf gives, times factor. */
	sum(termsOf: (k: number) => Terms | undefined, suppliers: string[], items: string[], factor = 1): Terms {
		const terms: Terms = [];
		for (const s of suppliers) for (const i of items) addAll(terms, termsOf(this.key(s, i)), factor);
		return terms;
	}

	/** The item groups a scope ranges over: each item alone, one lot, one item, or the whole event. */
	scopeGroups(scope: Scope): string[][] {
		if (scope === 'each_item') return this.coveredItems.map((i) => [i.ref]);
		if (scope === 'event') return [this.coveredItems.map((i) => i.ref)];
		if ('item' in scope) return this.offered.has(scope.item) ? [[scope.item]] : [];
		return [this.coveredItems.filter((i) => i.lot === scope.lot).map((i) => i.ref)];
	}

	/** The supplier groups a rule's `who` ranges over: each supplier alone, one supplier, or a tag. */
	whoGroups(who: Who): string[][] {
		if (who === 'each_supplier') return this.problem.suppliers.map((s) => [s.ref]);
		if ('supplier' in who) return [[who.supplier]];
		return [this.problem.suppliers.filter((s) => s.tags?.includes(who.tag)).map((s) => s.ref)];
	}

	/**
	 * A row of the model that the feasibility relaxation may let give way. A rule on one continuous
	 * column (a share cap of one supplier on one item) is a bound, not a row: the model stays small. The
	 * relaxation keeps it a row so that it can give way. Returns the row, or -1 when it became a bound.
	 */
	elasticRow(meaning: RowMeaning, terms: Terms, lower: number, upper: number): number {
		const m = this.builder;
		const single = terms.length === 2 && terms[1]! > 0 && !m.integer[terms[0]!];
		if (!this.elastic && meaning.kind === 'rule' && single) {
			const [column, coefficient] = [terms[0]!, terms[1]!];
			m.upper[column] = Math.min(m.upper[column]!, upper / coefficient);
			m.lower[column] = Math.max(m.lower[column]!, lower / coefficient);
			return -1;
		}
		const row = m.row(meaning, terms, lower, upper);
		if (this.elastic) {
			const weight = PRIORITY[meaning.kind] * this.unitWeight(meaning);
			if (lower > -Infinity) this.slackRows.push({ row, direction: 1, weight });
			if (upper < Infinity) this.slackRows.push({ row, direction: -1, weight });
		}
		return row;
	}

	/**
	 * What one unit of give-way weighs on a row: spend is turned into units at the items' reference
	 * price, and one supplier more or less weighs like the group's average demand.
	 */
	private unitWeight(meaning: RowMeaning): number {
		if (meaning.kind !== 'rule' || meaning.unit === 'quantity') return 1;
		const demand = this.demand;
		const items = meaning.items.length ? meaning.items : [...demand.keys()];
		if (meaning.unit === 'count') return items.reduce((a, i) => a + demand.get(i)!, 0) / items.length;
		this.referencePrice ??= referencePrices(this.problem);
		const reference = this.referencePrice;
		const value = items.reduce((a, i) => a + demand.get(i)! * (reference.get(i) || 1), 0);
		const units = items.reduce((a, i) => a + demand.get(i)!, 0);
		return units / Math.max(1e-9, value);
	}
}
