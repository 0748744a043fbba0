// Non-price criteria turned into money. Each criterion adds money to a bid for every point of its answer
// beyond a threshold (above it, e.g. lead time, or below it, e.g. a quality score): a percentage of the
// unit price, an amount per unit, or an amount per supplier awarded anything. The money depends on the
// bid's own answer only, so the order of two bids never depends on a third (unlike relative scoring,
// below). Money is only ever added: evaluated costs stay >= 0 and the engine's fixed costs too.

export type CriterionBasis = 'percent_of_price' | 'per_unit' | 'per_supplier';

export interface Criterion {
	ref: string;
	name: string;
	/** What a point is (days, points); words only. */
	unit: string;
	answeredBy: 'supplier' | 'evaluator';
	basis: CriterionBasis;
	/** Percent of the unit price (percent_of_price), or money per unit or per supplier, per point. */
	rate: number;
	threshold: number;
	/** "above": each point above the threshold adds the rate; "below": each point below it. */
	direction: 'above' | 'below';
}

/** The points of an answer that cost money: how far it is beyond the threshold on the costly side. */
export function pointsBeyond(criterion: Criterion, value: number): number {
	const beyond = criterion.direction === 'above' ? value - criterion.threshold : criterion.threshold - value;
	return Math.max(0, beyond);
}

/** A supplier's adjustment from all criteria: percent of each price, money per unit, money once. */
export interface Adjustment {
	percentOfPrice: number;
	perUnit: number;
	perSupplier: number;
}

export const NO_ADJUSTMENT: Adjustment = { percentOfPrice: 0, perUnit: 0, perSupplier: 0 };

/** Six decimals, as prices are stored (numeric(20, 6)): float noise must not reach a problem's hash. */
const round = (n: number) => Math.round(n * 1e6) / 1e6;

/** Sums each criterion's money for one supplier's answers; an unanswered criterion is in `missing`. */
export function adjustmentOf(
	criteria: readonly Criterion[],
	answers: Readonly<Record<string, number>>
): { adjustment: Adjustment; missing: string[] } {
	const adjustment = { ...NO_ADJUSTMENT };
	const missing: string[] = [];
	for (const criterion of criteria) {
		const value = answers[criterion.ref];
		if (value === undefined) {
			missing.push(criterion.ref);
			continue;
		}
		const money = criterion.rate * pointsBeyond(criterion, value);
		if (criterion.basis === 'percent_of_price') adjustment.percentOfPrice += money;
		else if (criterion.basis === 'per_unit') adjustment.perUnit += money;
		else adjustment.perSupplier += money;
	}
	return {
		adjustment: {
			percentOfPrice: round(adjustment.percentOfPrice),
			perUnit: round(adjustment.perUnit),
			perSupplier: round(adjustment.perSupplier)
		},
		missing
	};
}

/** Price + the percentage of the price + the amount per unit: what one unit costs once evaluated. */
export function evaluatedUnitCost(unitPrice: number, adjustment: Adjustment): number {
	return round(unitPrice * (1 + adjustment.percentOfPrice / 100) + adjustment.perUnit);
}

/** The same for a price over several units (a bundle of `units` units in all). */
export function evaluatedPrice(price: number, units: number, adjustment: Adjustment): number {
	return round(price * (1 + adjustment.percentOfPrice / 100) + adjustment.perUnit * units);
}

export const hasAdjustment = (a: Adjustment) =>
	a.percentOfPrice !== 0 || a.perUnit !== 0 || a.perSupplier !== 0;

// Relative scoring, offered as a view only. score = weight · 100 · lowest price / price + (1 - weight) ·
// quality points: the lowest price is another bid's, so adding or removing a bid can reverse the order of
// two others (rank reversal: about 1 in 5 of 303 tenders, Schotanus et al. 2022, Journal of Purchasing
// and Supply Management 28(2) 100744).

export const RANK_REVERSAL_CAUTION =
	'Relative scoring compares each price with the lowest one, so adding or removing a bid can reverse the order of two others (rank reversal: about 1 in 5 of 303 tenders, Schotanus et al. 2022, Journal of Purchasing and Supply Management 28(2) 100744). It is a view only: the award minimises the evaluated cost, which no other bid changes.';

export interface ScoredBid {
	supplier: string;
	price: number;
	quality: number;
}

/** Each bid's relative score, best first; `priceWeight` from 0 to 1, quality points as given. */
export function relativeScores(
	bids: readonly ScoredBid[],
	priceWeight: number
): { supplier: string; score: number }[] {
	const lowest = Math.min(...bids.map((b) => b.price));
	return bids
		.map((b) => ({
			supplier: b.supplier,
			score: priceWeight * 100 * (b.price > 0 ? lowest / b.price : 1) + (1 - priceWeight) * b.quality
		}))
		.sort((x, y) => y.score - x.score || x.supplier.localeCompare(y.supplier));
}

export interface RankReversal {
	/** The bid taken away. */
	removed: string;
	/** Ahead with every bid in, behind once `removed` is gone. */
	ahead: string;
	behind: string;
	before: { ahead: number; behind: number };
	after: { ahead: number; behind: number };
}

/** Scores closer than this are a tie, not an order. */
const TIE = 1e-9;

/** Every pair of bids whose order reverses when one other bid is removed. */
export function rankReversals(bids: readonly ScoredBid[], priceWeight: number): RankReversal[] {
	if (bids.length < 3) return [];
	const all = new Map(relativeScores(bids, priceWeight).map((s) => [s.supplier, s.score]));
	const reversals: RankReversal[] = [];
	for (const removed of bids) {
		const rest = bids.filter((b) => b !== removed);
		const after = new Map(relativeScores(rest, priceWeight).map((s) => [s.supplier, s.score]));
		for (const x of rest)
			for (const y of rest) {
				const [bx, by, ax, ay] = [
					all.get(x.supplier)!,
					all.get(y.supplier)!,
					after.get(x.supplier)!,
					after.get(y.supplier)!
				];
				if (bx - by > TIE && ay - ax > TIE)
					reversals.push({
						removed: removed.supplier,
						ahead: x.supplier,
						behind: y.supplier,
						before: { ahead: bx, behind: by },
						after: { ahead: ax, behind: ay }
					});
			}
	}
	return reversals;
}

/** The rule in words: "Each point above 5 days adds 0.2% of the unit price". */
export function describeCriterion(c: Criterion, money: (amount: number) => string): string {
	const adds =
		c.basis === 'percent_of_price'
			? `${c.rate}% of the unit price`
			: c.basis === 'per_unit'
				? `${money(c.rate)} per unit`
				: `${money(c.rate)} once, if the supplier is awarded anything`;
	return `Each point ${c.direction} ${c.threshold}${c.unit ? ` ${c.unit}` : ''} adds ${adds}`;
}
