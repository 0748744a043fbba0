// The abnormally-low screen: after the opening, each bid line's unit price is compared with the other bids
// on the same item and with the item's baseline, and each bid's total with the other bids' totals on the
// same items. A flag is a reason to ask the supplier to explain (EU Directive 2014/24/EU Art. 69), never a
// reason to reject on its own: the directive sets no threshold, so these are screens in common use, and the
// settings below are ours.
//
// Prices come in already comparable (the event's currency, the item's whole quantity, price breaks applied).
//
// Line rules, each applied to the OTHER bids' prices on the item (the price itself left out, so one very low
// price cannot pull its own yardstick down):
// - median: price < (1 − belowShare) × median(others);
// - fence: price < Q1 − k·(Q3 − Q1) of the others (Tukey's lower fence, Tukey 1977, Exploratory Data
//   Analysis, k = 1.5), quartiles by linear interpolation between order statistics: Hyndman & Fan 1996
//   (The American Statistician 50(4) 361-365) definition 7, R's default quantile type 7 and Excel's
//   QUARTILE.INC. The fence only adds weight to a median flag and never flags alone: with tightly grouped
//   other bids (20, 20, 21) it lies a few percent below them (19.25) and would flag ordinary competition;
// - baseline: price < (1 − belowShare) × the item's baseline unit price, when it has one.
// The median and fence rules need at least `minOthers` other prices; with fewer, only the baseline rule
// applies (with two bids, "the others" is one price: not a distribution).
//
// Total rule: for bid s and each other bid t that prices some of the same items, ρ_t = Σ q·p_s / Σ q·p_t over
// the items both price (q the item's quantity); s is flagged when median(ρ_t) < 1 − belowShare, with at least
// `minOthers` such bids. And against the baseline: Σ q·p_s < (1 − belowShare) × Σ q·baseline over the items s
// prices that have a baseline.

export interface LowScreenSettings {
	/** How far below the yardstick (a share: 0.3 is 30 %) a price is flagged. */
	belowShare: number;
	/** Tukey's k for the lower fence. */
	fenceK: number;
	/** Other bids needed before the median and fence rules apply. */
	minOthers: number;
}

/**
 * 30 % below the others' median or the baseline, Tukey's 1.5, and 3 other bids: our defaults, in the range
 * used in practice by buyers' screens; the law fixes no threshold (2014/24/EU Art. 69 asks for an explanation,
 * whatever the screen).
 */
export const LOW_SCREEN: LowScreenSettings = { belowShare: 0.3, fenceK: 1.5, minOthers: 3 };

export type LowReason =
	| { rule: 'median'; median: number; others: number; below: number }
	| { rule: 'fence'; fence: number; q1: number; q3: number; others: number }
	| { rule: 'baseline'; baseline: number; below: number };

export interface ScreenInput {
	items: readonly { quantity: number; baseline: number | null }[];
	suppliers: number;
	/** Unit prices, row-major (item × supplier); NaN where a supplier gave no price. */
	prices: readonly number[];
}

export interface LineFlag {
	item: number;
	supplier: number;
	price: number;
	reasons: LowReason[];
}

export interface TotalFlag {
	supplier: number;
	total: number;
	reasons: LowReason[];
}

/** Quantile p of ascending values by Hyndman & Fan definition 7: h = (n − 1)p, interpolate at h. */
export function quantile7(sorted: readonly number[], p: number): number {
	if (!sorted.length) return NaN;
	const h = (sorted.length - 1) * p;
	const lo = Math.floor(h);
	const hi = Math.min(lo + 1, sorted.length - 1);
	return sorted[lo]! + (h - lo) * (sorted[hi]! - sorted[lo]!);
}

/** The reasons one price is abnormally low against the other prices and a baseline (none: not flagged). */
export function screenPrice(
	price: number,
	others: readonly number[],
	baseline: number | null,
	settings: LowScreenSettings = LOW_SCREEN
): LowReason[] {
	return screenSorted(
		price,
		[...others].sort((a, b) => a - b),
		baseline,
		settings
	);
}

/** As screenPrice, the other prices given in ascending order. */
function screenSorted(
	price: number,
	sorted: readonly number[],
	baseline: number | null,
	settings: LowScreenSettings
): LowReason[] {
	const reasons: LowReason[] = [];
	if (sorted.length >= settings.minOthers) {
		const median = quantile7(sorted, 0.5);
		if (median > 0 && price < (1 - settings.belowShare) * median) {
			reasons.push({ rule: 'median', median, others: sorted.length, below: 1 - price / median });
			const q1 = quantile7(sorted, 0.25);
			const q3 = quantile7(sorted, 0.75);
			const fence = q1 - settings.fenceK * (q3 - q1);
			if (price < fence) reasons.push({ rule: 'fence', fence, q1, q3, others: sorted.length });
		}
	}
	if (baseline !== null && baseline > 0 && price < (1 - settings.belowShare) * baseline)
		reasons.push({ rule: 'baseline', baseline, below: 1 - price / baseline });
	return reasons;
}

/** Every flagged line and every flagged bid total of a tabulation. */
export function screenBids(
	input: ScreenInput,
	settings: LowScreenSettings = LOW_SCREEN
): { lines: LineFlag[]; totals: TotalFlag[] } {
	const { items, suppliers: width, prices } = input;
	const at = (r: number, c: number) => prices[r * width + c]!;
	const lines: LineFlag[] = [];
	items.forEach((item, r) => {
		// The item's prices sorted once; each price's "others" is that list with one copy of it taken out.
		const sorted: number[] = [];
		for (let c = 0; c < width; c++) if (!Number.isNaN(at(r, c))) sorted.push(at(r, c));
		sorted.sort((a, b) => a - b);
		for (let c = 0; c < width; c++) {
			const price = at(r, c);
			if (Number.isNaN(price)) continue;
			const k = sorted.indexOf(price);
			const others = sorted.slice(0, k).concat(sorted.slice(k + 1));
			const reasons = screenSorted(price, others, item.baseline, settings);
			if (reasons.length) lines.push({ item: r, supplier: c, price, reasons });
		}
	});
	const totals: TotalFlag[] = [];
	for (let s = 0; s < width; s++) {
		let total = 0;
		let ofBaselined = 0;
		let baselineValue = 0;
		const ratios: number[] = [];
		items.forEach((item, r) => {
			const price = at(r, s);
			if (Number.isNaN(price)) return;
			total += item.quantity * price;
			if (item.baseline !== null) {
				ofBaselined += item.quantity * price;
				baselineValue += item.quantity * item.baseline;
			}
		});
		if (!total) continue;
		for (let t = 0; t < width; t++) {
			if (t === s) continue;
			let mine = 0;
			let theirs = 0;
			for (let r = 0; r < items.length; r++) {
				const own = prices[r * width + s]!;
				const other = prices[r * width + t]!;
				if (Number.isNaN(own) || Number.isNaN(other)) continue;
				mine += items[r]!.quantity * own;
				theirs += items[r]!.quantity * other;
			}
			if (theirs > 0) ratios.push(mine / theirs);
		}
		const reasons: LowReason[] = [];
		if (ratios.length >= settings.minOthers) {
			const ratio = quantile7(
				[...ratios].sort((a, b) => a - b),
				0.5
			);
			if (ratio < 1 - settings.belowShare)
				reasons.push({ rule: 'median', median: total / ratio, others: ratios.length, below: 1 - ratio });
		}
		if (baselineValue > 0 && ofBaselined < (1 - settings.belowShare) * baselineValue)
			reasons.push({ rule: 'baseline', baseline: baselineValue, below: 1 - ofBaselined / baselineValue });
		if (reasons.length) totals.push({ supplier: s, total, reasons });
	}
	return { lines, totals };
}

/** A reason in plain words; `money` formats a price or total in the event's currency. */
export function describeLowReason(reason: LowReason, money: (v: number) => string): string {
	const pct = (share: number) => `${Math.round(share * 1000) / 10} %`;
	switch (reason.rule) {
		case 'median':
			return `${pct(reason.below)} below the median of the ${reason.others} other bids (${money(reason.median)})`;
		case 'fence':
			return `below the lower fence of the ${reason.others} other bids (${money(reason.fence)}: lower quartile ${money(reason.q1)} − 1.5 × the interquartile range)`;
		case 'baseline':
			return `${pct(reason.below)} below the baseline (${money(reason.baseline)})`;
	}
}
