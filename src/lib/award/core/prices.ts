// Prices read from the problem that the model and the result share: the tiers of a bid's price breaks,
// each item's reference price, and how a bundle's price splits over its items.
import type { AwardProblem } from './problem';

/**
 * The all-units price of a bid for `quantity`: the price of the highest break the quantity reaches, else
 * the bid's own price; the breaks may come in any order. A quantity less than `tolerance` (absolute)
 * below a break reaches it: the checker allows a solver's rounding there.
 * The one reading of a price schedule for the checker, the tabulation and changes made by hand.
 */
export function priceAtQuantity(
	bid: { unitPrice: number; priceBreaks?: readonly { fromQuantity: number; unitPrice: number }[] },
	quantity: number,
	tolerance = 0
): number {
	let price = bid.unitPrice;
	let reached = -Infinity;
	for (const b of bid.priceBreaks ?? [])
		if (quantity >= b.fromQuantity - tolerance && b.fromQuantity > reached) {
			reached = b.fromQuantity;
			price = b.unitPrice;
		}
	return price;
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
