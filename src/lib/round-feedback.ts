// Feedback for a new round of bids: each invited supplier learns only where its own bid stands, per item
// or per lot: its rank (1 = lowest price) or how far its price is above the best one, in percent. Never
// another supplier's name or price, nor how many bid (DOMAIN.md: a supplier never sees the number of
// bidders, so "2nd", never "2nd of 4"). Prices are the unit prices as bid (price breaks and bundles left
// out): freight and duty adders are the same for every supplier of an item, so they change no rank.

export type FeedbackKind = 'none' | 'rank' | 'gap';
export type FeedbackPer = 'item' | 'lot';

export interface FeedbackItem {
	ref: string;
	lot: string | null;
	quantity: number;
}

export interface FeedbackBid {
	supplier: string;
	lines: { item: string; unitPrice: number }[];
}

/** One item's or lot's feedback to one supplier. */
export interface FeedbackEntry {
	/** The item's ref, or the lot's ref (an item in no lot stands for itself). */
	ref: string;
	/** Competition ranking: 1 + the number of other bids strictly lower. */
	rank?: number;
	/** (own - best) / best × 100, to one decimal; null when the best price is 0 and the own one is not. */
	gapPercent?: number | null;
}

/**
 * What each supplier is told. A lot counts only the suppliers who priced every item in it (a lot's
 * value is Σ unit price × quantity); a supplier gets feedback only on what it priced itself.
 */
export function roundFeedback(
	items: FeedbackItem[],
	bids: FeedbackBid[],
	kind: FeedbackKind,
	per: FeedbackPer
): Map<string, FeedbackEntry[]> {
	const out = new Map<string, FeedbackEntry[]>(bids.map((b) => [b.supplier, []]));
	if (kind === 'none') return out;
	const groups = new Map<string, FeedbackItem[]>();
	for (const item of items) {
		const key = per === 'lot' && item.lot !== null ? item.lot : item.ref;
		groups.set(key, [...(groups.get(key) ?? []), item]);
	}
	const priceOf = new Map(bids.map((b) => [b.supplier, new Map(b.lines.map((l) => [l.item, l.unitPrice]))]));
	for (const [ref, members] of groups) {
		const values: { supplier: string; value: number }[] = [];
		for (const bid of bids) {
			const prices = priceOf.get(bid.supplier)!;
			if (!members.every((i) => prices.has(i.ref))) continue;
			values.push({
				supplier: bid.supplier,
				value: members.reduce((sum, i) => sum + prices.get(i.ref)! * i.quantity, 0)
			});
		}
		if (!values.length) continue;
		const best = Math.min(...values.map((v) => v.value));
		for (const { supplier, value } of values) {
			const entry: FeedbackEntry =
				kind === 'rank'
					? { ref, rank: 1 + values.filter((v) => v.value < value).length }
					: {
							ref,
							gapPercent:
								value === best ? 0 : best === 0 ? null : Math.round(((value - best) / best) * 1000) / 10
						};
			out.get(supplier)!.push(entry);
		}
	}
	return out;
}

/** 1st, 2nd, 3rd, 4th … 11th, 12th, 13th, 21st. */
export function ordinal(n: number): string {
	const tens = n % 100;
	if (tens >= 11 && tens <= 13) return `${n}th`;
	return `${n}${{ 1: 'st', 2: 'nd', 3: 'rd' }[n % 10] ?? 'th'}`;
}

/** One entry as the supplier reads it. */
export function feedbackText(entry: FeedbackEntry): string {
	if (entry.rank !== undefined)
		return entry.rank === 1 ? '1st: your price is the lowest' : `${ordinal(entry.rank)} lowest price`;
	if (entry.gapPercent === undefined) return '';
	if (entry.gapPercent === 0) return 'at the best price';
	if (entry.gapPercent === null) return 'above the best price';
	return `${entry.gapPercent.toFixed(1)}% above the best price`;
}
