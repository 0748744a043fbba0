// The constraint families of the award model, one function each, in the order buildModel adds them.
// Notation as in model.ts: d[i] demand; x[b,t] quantity on tier t of bid b; z[b,t], w[k], y[s,i],
// v[s,G] in {0,1}; q(s,i) the quantity of i awarded to s; spend(s,i) what it costs.
import type { ModelContext } from './model-context';
import { addAll, addTerm, type RowMeaning, type Terms } from './model-builder';
import { bundleShares, tiersOf } from './prices';
import type { AwardRule, Scope } from './problem';

/** The meaning of every structural row, one shared object: a 10,000 x 50 model has over a million. */
const STRUCTURE: RowMeaning = Object.freeze({ kind: 'structure' });

type RuleOf<T extends AwardRule['type']> = Extract<AwardRule, { type: T }>;
export type IndexedRule = { rule: AwardRule; index: number };

const ruleRow = (
	rule: number,
	items: string[],
	suppliers: string[],
	unit: 'quantity' | 'spend' | 'count'
): RowMeaning => ({ kind: 'rule', rule, items, suppliers, unit });

const isItemScope = (scope: Scope) => scope === 'each_item' || (typeof scope === 'object' && 'item' in scope);

/**
 * Bid quantities and price breaks. A bid without breaks is one column 0 <= x[b,0] <= maxQuantity[b] at
 * its unit price. A bid with breaks (all-units: the price of the tier reached applies to the whole
 * quantity) gets per tier t a column x[b,t] at that tier's price and a choice z[b,t] in {0,1}:
 *   from[t]·z[b,t] <= x[b,t] <= top[t]·z[b,t]    (a tier's price applies only to quantities in its range)
 *   Σ_t z[b,t] <= 1                               (one price tier per bid)
 * top[t] is just below the next tier's start (by BREAK_MARGIN), capped by the ceiling min(maxQuantity,
 * most[i], capacity[s]): the big-M. A quantity that reaches a break is priced at the break's price, as the bid
 * says; the tier before it ends strictly below (with the closed bound a spend floor could take exactly the
 * break quantity at the higher price, and the checker then priced it lower and found the floor broken).
 * The bid's own limit bounds the column; demand and capacity only give the linking rows a finite big-M
 * (as column bounds they would distort the duals). The relaxation lets capacity give way, so there the
 * ceiling ignores it. Tiers that start above the ceiling are left out. Where the bid moves in steps
 * (whole units, packs), x[b,t] = step·n[b,t] with n[b,t] a whole number (stepColumn).
 */
/**
 * How far below a price break the tier before it ends: more than the checker's tolerance (check.ts counts a
 * quantity within 1e-6 of a break as reaching it) plus the solver's feasibility tolerance (1e-7), and a
 * hundred-millionth of the break for large quantities.
 */
export const breakMargin = (from: number) => Math.max(1e-5, 1e-8 * from);

export function bidQuantities(ctx: ModelContext): void {
	const m = ctx.builder;
	const tierUsedRows: Terms[] = [];
	ctx.problem.bids.forEach((bid, b) => {
		const most = ctx.most.get(bid.item)!;
		const bidLimit = bid.maxQuantity ?? Infinity;
		const ceiling = Math.min(
			bidLimit,
			most,
			ctx.elastic ? Infinity : (ctx.capacity.get(bid.supplier) ?? Infinity)
		);
		const tiers = bid.priceBreaks?.length ? tiersOf(bid).filter((t) => t.from <= ceiling + 1e-9) : null;
		const pair = ctx.pairOf(bid.supplier, bid.item);
		pair.upper += ceiling;
		if (!tiers || tiers.length === 1) {
			const [x, step] = stepColumn(ctx, b, 0, bid.unitPrice, bidLimit);
			addTerm(pair.quantity, x, step);
			return;
		}
		const oneTier: Terms = [];
		tiers.forEach((tier, t) => {
			const next = tiers[t + 1]?.from;
			const top = Math.min(next === undefined ? Infinity : next - breakMargin(next), ceiling);
			const [x, step] = stepColumn(ctx, b, t, tier.unitPrice, Math.min(top, bidLimit), next);
			const z = m.column({ kind: 'tier_used', bid: b, tier: t }, 0, 0, 1, true);
			m.row(STRUCTURE, [x, step, z, -tier.from], 0, Infinity);
			m.row(STRUCTURE, [x, step, z, -top], -Infinity, 0);
			addTerm(oneTier, z, 1);
			addTerm(pair.quantity, x, step);
		});
		tierUsedRows.push(oneTier);
	});
	for (const terms of tierUsedRows) m.row(STRUCTURE, terms, -Infinity, 1);
}

/**
 * The quantity column of one tier of bid b, at most `upper` units and strictly below `below` (the next
 * break) when given. A bid that moves in steps (whole units, or packs: units.ts) gets an integer column
 * n[b,t] counting steps, at the price of a step, so that x[b,t] = step·n[b,t]; its bound is the whole
 * steps within those limits. Returns the column and the units one of it stands for.
 */
function stepColumn(
	ctx: ModelContext,
	b: number,
	tier: number,
	unitPrice: number,
	upper: number,
	below?: number
): [column: number, step: number] {
	const step = ctx.bidStep[b]!;
	const meaning = { kind: 'tier', bid: b, tier, unitPrice } as const;
	if (step === 0) return [ctx.builder.column(meaning, unitPrice, 0, upper), 1];
	// A little grace for division: 96 / 12 computed as 7.999999999 is still 8 steps.
	const within = Math.floor(upper / step + 1e-9);
	const underBreak = below === undefined ? Infinity : Math.ceil(below / step - 1e-9) - 1;
	return [
		ctx.builder.column({ ...meaning, step }, unitPrice * step, 0, Math.min(within, underBreak), true),
		step
	];
}

/**
 * Bundles: one column w[k] in {0,1} at the bundle's price, taken whole or not at all. It adds
 * q[k,i]·w[k] to q(s,i) for each of its items, and share[k,i]·price[k]·w[k] to spend(s,i), the price
 * split over the items by quantity times reference price (prices.ts).
 */
export function bundles(ctx: ModelContext): void {
	const m = ctx.builder;
	ctx.problem.bundles.forEach((bundle, k) => {
		const w = m.column({ kind: 'bundle', bundle: k }, bundle.price, 0, 1, true);
		const shares = bundleShares(ctx.problem, bundle);
		for (const line of bundle.items) {
			const pair = ctx.pairOf(bundle.supplier, line.item);
			addTerm(pair.quantity, w, line.quantity);
			addTerm((pair.bundleSpend ??= []), w, bundle.price * shares.get(line.item)!);
			pair.upper += line.quantity;
		}
	});
}

/**
 * Cover: Σ_s q(s,i) = d[i] for every item that has an offer (the others are reported uncovered). Where
 * the item's bids move in steps, d[i] <= Σ_s q(s,i) <= most[i]: the award may round up by less than a
 * step (units.ts).
 */
export function cover(ctx: ModelContext): void {
	for (const item of ctx.coveredItems) {
		const terms: Terms = [];
		for (const k of ctx.pairsOfItem[ctx.itemIndex.get(item.ref)!]!) addAll(terms, ctx.quantityOf(k));
		ctx.elasticRow({ kind: 'cover', item: item.ref }, terms, item.quantity, ctx.most.get(item.ref)!);
	}
}

/** Capacity: Σ_i q(s,i) <= K[s], a supplier's capacity in units over all items. */
export function capacities(ctx: ModelContext): void {
	for (const supplier of ctx.problem.suppliers) {
		if (supplier.capacity === undefined) continue;
		const terms: Terms = [];
		for (const k of ctx.pairsOfSupplier[ctx.supplierIndex.get(supplier.ref)!]!)
			addAll(terms, ctx.quantityOf(k));
		if (terms.length)
			ctx.elasticRow({ kind: 'capacity', supplier: supplier.ref }, terms, -Infinity, supplier.capacity);
	}
}

/**
 * Win indicator y[s,i] in {0,1}, "s wins part of i", made once per pair on first use, with
 *   q(s,i) <= U[s,i]·y[s,i]           (any award sets y; big-M U = min(most the offers give, most[i]), most[i] = d[i] unless quantities move in steps)
 *   q(s,i) >= min(1, U[s,i])·y[s,i]   (a win is at least one unit, or the whole of a smaller item)
 * Null when s offers nothing for i.
 */
export function winIndicator(ctx: ModelContext, s: string, i: string): number | null {
	const k = ctx.key(s, i);
	const pair = ctx.pair(k);
	if (!pair) return null;
	const found = ctx.wins.get(k);
	if (found !== undefined) return found;
	const m = ctx.builder;
	const upper = Math.min(pair.upper, ctx.most.get(i)!);
	const y = m.column({ kind: 'wins', supplier: s, item: i }, 0, 0, 1, true);
	ctx.wins.set(k, y);
	const over: Terms = [];
	addAll(over, pair.quantity);
	addTerm(over, y, -upper);
	m.row(STRUCTURE, over, -Infinity, 0);
	const floor = Math.min(1, upper);
	const under: Terms = [];
	addAll(under, pair.quantity);
	addTerm(under, y, -floor);
	m.row(STRUCTURE, under, 0, Infinity);
	return y;
}

/**
 * Group win indicator v[s,G] in {0,1}, "s wins part of group G" (a lot, or the event), on first use:
 *   y[s,i] <= v[s,G] for each i in G,   v[s,G] <= Σ_{i∈G} y[s,i]
 * Null when s offers nothing in G.
 */
export function groupWinIndicator(
	ctx: ModelContext,
	s: string,
	group: string,
	items: string[]
): number | null {
	const k = `${s}\u0000${group}`;
	const found = ctx.groupWins.get(k);
	if (found !== undefined) return found;
	const ys = items.map((i) => winIndicator(ctx, s, i)).filter((y): y is number => y !== null);
	if (!ys.length) return null;
	const m = ctx.builder;
	const v = m.column({ kind: 'wins_group', supplier: s, group }, 0, 0, 1, true);
	ctx.groupWins.set(k, v);
	for (const y of ys) m.row(STRUCTURE, [y, 1, v, -1], -Infinity, 0);
	const some: Terms = [v, 1];
	for (const y of ys) addTerm(some, y, -1);
	m.row(STRUCTURE, some, -Infinity, 0);
	return v;
}

/**
 * Share caps and floors over a group of items G and suppliers W, share p:
 *   quantity basis: Σ_{s∈W} Σ_{i∈G} q(s,i) <= p·Σ_{i∈G} d[i]          (>= for a floor)
 *   spend basis:    Σ_{s∈W} spend(s,G) - p·Σ_{all s} spend(s,G) <= 0   (>= 0 for a floor)
 * The basis defaults to quantity on one item, spend over a lot or the event. A cap on suppliers with
 * no offer in G is left out. No big-M.
 * A spend share of each supplier over G writes the total once, as a column T[G] with
 *   Σ_{all s} spend(s,G) - T[G] = 0,   spend(s,G) - p·T[G] <= 0 for each s,
 * rather than repeating every bid of G in each supplier's row (at 10,000 items and 50 suppliers in four
 * lots that is 0.7 million matrix entries instead of 17.5 million).
 */
export function shares(ctx: ModelContext, rule: RuleOf<'max_share' | 'min_share'>, index: number): void {
	const p = rule.percent / 100;
	const basis = rule.basis ?? (isItemScope(rule.scope) ? 'quantity' : 'spend');
	const cap = rule.type === 'max_share';
	const whoGroups = ctx.whoGroups(rule.who);
	for (const items of ctx.scopeGroups(rule.scope)) {
		if (!items.length) continue;
		const total = basis === 'spend' && whoGroups.length > 1 ? spendTotal(ctx, items) : null;
		for (const suppliers of whoGroups) {
			if (!suppliers.length) continue;
			if (basis === 'quantity') {
				const terms = ctx.sum(ctx.quantityOf, suppliers, items);
				const total = items.reduce((a, i) => a + ctx.demand.get(i)!, 0);
				if (!terms.length && cap) continue;
				const meaning = ruleRow(index, items, suppliers, 'quantity');
				if (cap) ctx.elasticRow(meaning, terms, -Infinity, p * total);
				else ctx.elasticRow(meaning, terms, p * total, Infinity);
			} else {
				const terms = ctx.sum(ctx.spendTermsOf, suppliers, items);
				if (total === null) addAll(terms, ctx.sum(ctx.spendTermsOf, ctx.everyone, items), -p);
				else addTerm(terms, total, -p);
				const meaning = ruleRow(index, items, suppliers, 'spend');
				if (cap) ctx.elasticRow(meaning, terms, -Infinity, 0);
				else ctx.elasticRow(meaning, terms, 0, Infinity);
			}
		}
	}
}

/**
 * T[G], the spend over the items G, on first use: Σ_{all s} spend(s,G) - T[G] = 0. Its upper bound is
 * the most G could cost (each item's largest quantity at its dearest offer), so a relaxation that prices
 * it alone stays bounded.
 */
function spendTotal(ctx: ModelContext, items: string[]): number {
	const key = items.join('\u0000');
	const found = ctx.spendTotals.get(key);
	if (found !== undefined) return found;
	const m = ctx.builder;
	const terms = ctx.sum(ctx.spendTermsOf, ctx.everyone, items);
	let most = 0;
	for (const i of items) {
		for (const s of ctx.everyone) {
			const spend = ctx.spendTermsOf(ctx.key(s, i));
			if (!spend) continue;
			for (let k = 0; k < spend.length; k += 2) {
				const column = spend[k]!;
				const meaning = m.columns[column]!;
				const units =
					meaning.kind === 'bundle'
						? 1
						: ctx.most.get(i)! / (meaning.kind === 'tier' ? (meaning.step ?? 1) : 1);
				most += spend[k + 1]! * Math.min(m.upper[column]!, units);
			}
		}
	}
	const total = m.column({ kind: 'spend_total', items: items.length }, 0, 0, most);
	ctx.spendTotals.set(key, total);
	addTerm(terms, total, -1);
	m.row(STRUCTURE, terms, 0, 0);
	return total;
}

/**
 * The minimum award m[s,i] of each pair under any minimum-award rule: the largest of the rules'
 * amounts (a quantity, or a percentage of d[i]), never above d[i].
 */
export function minimumAwardAmounts(ctx: ModelContext, rules: IndexedRule[]): Map<number, number> {
	const minimumOf = new Map<number, number>();
	for (const { rule } of rules) {
		if (rule.type !== 'min_award') continue;
		for (const items of ctx.scopeGroups(rule.scope))
			for (const suppliers of ctx.whoGroups(rule.who))
				for (const s of suppliers)
					for (const i of items) {
						const d = ctx.demand.get(i)!;
						const amount = Math.min(d, rule.quantity ?? ((rule.percentOfItem ?? 0) / 100) * d);
						const k = ctx.key(s, i);
						minimumOf.set(k, Math.max(minimumOf.get(k) ?? 0, amount));
					}
	}
	return minimumOf;
}

/**
 * Minimum award: q(s,i) >= m[s,i]·y[s,i], so if s wins part of i it gets at least the minimum
 * (m[s,i] from minimumAwardAmounts; y's own rows give the big-M).
 */
export function minimumAwards(
	ctx: ModelContext,
	rule: RuleOf<'min_award'>,
	index: number,
	minimumOf: Map<number, number>
): void {
	for (const items of ctx.scopeGroups(rule.scope))
		for (const suppliers of ctx.whoGroups(rule.who))
			for (const s of suppliers)
				for (const i of items) {
					const y = winIndicator(ctx, s, i);
					if (y === null) continue;
					const terms: Terms = [];
					addAll(terms, ctx.quantityOf(ctx.key(s, i)));
					addTerm(terms, y, -minimumOf.get(ctx.key(s, i))!);
					ctx.elasticRow(ruleRow(index, [i], [s], 'quantity'), terms, 0, Infinity);
				}
}

/**
 * Supplier counts: L <= Σ_s y[s,i] <= U on one item; over a lot or the event the same with v[s,G],
 * summed over the suppliers that offer anything in the group.
 */
export function supplierCounts(ctx: ModelContext, rule: RuleOf<'supplier_count'>, index: number): void {
	for (const items of ctx.scopeGroups(rule.scope)) {
		if (!items.length) continue;
		const terms: Terms = [];
		const bidders = [...new Set(items.flatMap((i) => ctx.suppliersOfItem.get(i) ?? []))];
		const group =
			rule.scope === 'event'
				? 'event'
				: typeof rule.scope === 'object' && 'lot' in rule.scope
					? `lot:${rule.scope.lot}`
					: `item:${items[0]}`;
		for (const s of bidders) {
			const column =
				items.length === 1 && isItemScope(rule.scope)
					? winIndicator(ctx, s, items[0]!)
					: groupWinIndicator(ctx, s, group, items);
			if (column !== null) addTerm(terms, column, 1);
		}
		ctx.elasticRow(
			ruleRow(index, items, bidders, 'count'),
			terms,
			rule.min ?? -Infinity,
			rule.max ?? Infinity
		);
	}
}

/** Spend cap: Σ_{s∈W} spend(s,G) <= amount. */
export function spendCaps(ctx: ModelContext, rule: RuleOf<'max_spend'>, index: number): void {
	for (const items of ctx.scopeGroups(rule.scope))
		for (const suppliers of ctx.whoGroups(rule.who)) {
			const terms = ctx.sum(ctx.spendTermsOf, suppliers, items);
			if (terms.length)
				ctx.elasticRow(ruleRow(index, items, suppliers, 'spend'), terms, -Infinity, rule.amount);
		}
}

/** Exclusion: Σ_{s∈W} Σ_{i∈G} q(s,i) <= 0. */
export function exclusions(ctx: ModelContext, rule: RuleOf<'exclude'>, index: number): void {
	for (const items of ctx.scopeGroups(rule.scope))
		for (const suppliers of ctx.whoGroups(rule.who)) {
			const terms = ctx.sum(ctx.quantityOf, suppliers, items);
			if (terms.length) ctx.elasticRow(ruleRow(index, items, suppliers, 'quantity'), terms, -Infinity, 0);
		}
}

/** A quantity fixed by hand (an adjusted run): Σ_b q(s,i) = Q over the bids of supplier s for item i. */
export function fixedQuantities(ctx: ModelContext, rule: RuleOf<'fixed_quantity'>, index: number): void {
	const [item, supplier] = [rule.scope.item, rule.who.supplier];
	const terms = ctx.sum(ctx.quantityOf, [supplier], [item]);
	ctx.elasticRow(ruleRow(index, [item], [supplier], 'quantity'), terms, rule.quantity, rule.quantity);
}

/**
 * Fixed cost of an award, in the objective, no row: + amount·y[s,i] per supplier and item won, or
 * + amount·v[s,event] per supplier that wins anything.
 */
export function fixedCosts(ctx: ModelContext, rule: RuleOf<'award_fixed_cost'>): void {
	// The cost array is read after each indicator is made: making a column may grow it.
	const all = ctx.coveredItems.map((i) => i.ref);
	for (const s of rule.who ? [rule.who.supplier] : ctx.everyone) {
		if (rule.per === 'supplier_item') {
			for (const i of all) {
				const y = winIndicator(ctx, s, i);
				if (y !== null) ctx.builder.cost[y]! += rule.amount;
			}
		} else {
			const v = groupWinIndicator(ctx, s, 'event', all);
			if (v !== null) ctx.builder.cost[v]! += rule.amount;
		}
	}
}

/**
 * The feasibility relaxation: every cover, capacity and rule row gets a slack column s >= 0 that lets
 * it give way (+s on a row with a lower bound, -s on one with an upper bound), and the objective
 * becomes min Σ weight·s: the smallest total give-way that makes the rules fit together.
 */
export function feasibilitySlacks(ctx: ModelContext): void {
	const m = ctx.builder;
	m.cost.fill(0);
	for (const { row, direction, weight } of ctx.slackRows) {
		const s = m.column({ kind: 'slack', row }, weight, 0, Infinity);
		addTerm(m.rowTerms[row]!, s, direction);
	}
}
