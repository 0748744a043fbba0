// The evaluated cost in the award problem: each supplier's criteria money added to its unit prices,
// price breaks and bundles (percent of the price as bid, amounts per unit), and its per-supplier money as
// an award fixed cost of its own (the engine's award_fixed_cost with `who`). Each changed price keeps
// its price before the criteria (priceBeforeCriteria, ignored by the engine) for the pages.
import type { AwardProblem, AwardRule } from '$lib/award/core/problem';
import { evaluatedPrice, evaluatedUnitCost, hasAdjustment, type Adjustment } from './criteria';

export const CRITERIA_RULE_LABEL = 'Non-price criteria';

/**
 * `adjustments` by supplier ref; `adderOf(item)` is the landed adder per unit (freight, duty) already in
 * the problem's prices: the percentage applies to the price without it. A problem with no adjustment is
 * returned as it is (its hash unchanged).
 */
export function withCriteria(
	problem: AwardProblem,
	adjustments: ReadonlyMap<string, Adjustment>,
	adderOf: (item: string) => number
): AwardProblem {
	const of = (supplier: string) => {
		const a = adjustments.get(supplier);
		return a && hasAdjustment(a) ? a : undefined;
	};
	const unit = (landed: number, item: string, a: Adjustment) => {
		const adder = adderOf(item);
		return Math.round((evaluatedUnitCost(landed - adder, a) + adder) * 1e6) / 1e6;
	};
	const rules: AwardRule[] = [...adjustments]
		.filter(([supplier, a]) => a.perSupplier > 0 && problem.suppliers.some((s) => s.ref === supplier))
		.map(([supplier, a]) => ({
			type: 'award_fixed_cost',
			label: `${CRITERIA_RULE_LABEL}: ${supplier}`,
			amount: a.perSupplier,
			per: 'supplier',
			who: { supplier }
		}));
	if (
		!rules.length &&
		!problem.bids.some((b) => of(b.supplier)) &&
		!problem.bundles.some((b) => of(b.supplier))
	)
		return problem;
	return {
		...problem,
		bids: problem.bids.map((bid) => {
			const a = of(bid.supplier);
			if (!a) return bid;
			return {
				...bid,
				unitPrice: unit(bid.unitPrice, bid.item, a),
				priceBeforeCriteria: bid.unitPrice,
				...(bid.priceBreaks
					? {
							priceBreaks: bid.priceBreaks.map((p) => ({
								...p,
								unitPrice: unit(p.unitPrice, bid.item, a),
								priceBeforeCriteria: p.unitPrice
							}))
						}
					: {})
			};
		}),
		bundles: problem.bundles.map((bundle) => {
			const a = of(bundle.supplier);
			if (!a) return bundle;
			const units = bundle.items.reduce((n, l) => n + l.quantity, 0);
			const adders = bundle.items.reduce((n, l) => n + adderOf(l.item) * l.quantity, 0);
			return {
				...bundle,
				price: Math.round((evaluatedPrice(bundle.price - adders, units, a) + adders) * 1e6) / 1e6,
				priceBeforeCriteria: bundle.price
			};
		}),
		rules: [...problem.rules, ...rules]
	};
}

/** What a run's awarded lines cost before the criteria, by the prices the problem kept. */
export function priceBeforeCriteria(
	problem: AwardProblem,
	line: { supplier: string; item: string; quantity: number; unitPrice: number; cost: number; bundle?: string }
): number {
	if (line.bundle) {
		const bundle = problem.bundles.find((b) => b.ref === line.bundle);
		if (bundle?.priceBeforeCriteria === undefined || bundle.price === 0) return line.cost;
		return (line.cost * bundle.priceBeforeCriteria) / bundle.price;
	}
	const bid = problem.bids.find((b) => b.supplier === line.supplier && b.item === line.item);
	if (!bid || bid.priceBeforeCriteria === undefined) return line.cost;
	const tiers = [
		{ evaluated: bid.unitPrice, before: bid.priceBeforeCriteria },
		...(bid.priceBreaks ?? []).map((p) => ({
			evaluated: p.unitPrice,
			before: p.priceBeforeCriteria ?? p.unitPrice
		}))
	];
	const tier = tiers.find((t) => Math.abs(t.evaluated - line.unitPrice) < 1e-6);
	if (tier) return line.quantity * tier.before;
	// A line priced over several tiers: in proportion (exact for percentages, close for amounts per unit).
	return bid.unitPrice === 0 ? line.cost : (line.cost * bid.priceBeforeCriteria) / bid.unitPrice;
}

/**
 * Each awarded supplier's price (before the criteria) and evaluated cost (what the engine minimised,
 * with its own criteria money once). Null when the problem has no criteria money.
 */
export function evaluatedSupplierTotals(
	problem: AwardProblem,
	lines: {
		supplier: string;
		item: string;
		quantity: number;
		unitPrice: number;
		cost: number;
		bundle?: string;
	}[]
): { supplier: string; price: number; evaluated: number }[] | null {
	const once = new Map(
		problem.rules.flatMap((r) =>
			r.type === 'award_fixed_cost' && r.who && r.label?.startsWith(CRITERIA_RULE_LABEL)
				? [[r.who.supplier, r.amount] as const]
				: []
		)
	);
	const adjusted =
		once.size > 0 ||
		problem.bids.some((b) => b.priceBeforeCriteria !== undefined) ||
		problem.bundles.some((b) => b.priceBeforeCriteria !== undefined);
	if (!adjusted) return null;
	const totals = new Map<string, { supplier: string; price: number; evaluated: number }>();
	for (const line of lines) {
		if (line.quantity <= 0) continue;
		const total = totals.get(line.supplier) ?? {
			supplier: line.supplier,
			price: 0,
			evaluated: once.get(line.supplier) ?? 0
		};
		total.price += priceBeforeCriteria(problem, line);
		total.evaluated += line.cost;
		totals.set(line.supplier, total);
	}
	return [...totals.values()].sort((x, y) => x.supplier.localeCompare(y.supplier));
}
