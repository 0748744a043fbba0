// The abnormally-low screen ($lib/abnormally-low) applied to an opened-bids tabulation: shared by the Bids
// tab, the abnormally-low review and the run page. A cached tabulation is screened once.
import { describeLowReason, screenBids, type LowReason } from '$lib/abnormally-low';
import { formatMoney, formatUnitPrice } from '$lib/format';
import type { Tabulated } from './tabulation';

export interface LowFlag {
	supplierId: string;
	supplier: string;
	/** The item's ref; null for the bid's total. */
	item: string | null;
	/** The tabulation's row (null for a total) and column. */
	row: number | null;
	column: number;
	price: number;
	reasons: LowReason[];
}

const screened = new WeakMap<Tabulated, LowFlag[]>();

/**
 * The screen of a tabulation: each line at the supplier's own unit price at the item's quantity (breaks
 * applied; the buyer's freight and duty adders left out, as they are the same for every bid), each total
 * over the items the bid prices. Withdrawn bids take no part.
 */
export function lowPriceFlags(tab: Tabulated): LowFlag[] {
	const known = screened.get(tab);
	if (known) return known;
	const width = tab.suppliers.length;
	const prices = tab.prices.map((p, k) => {
		const supplier = tab.suppliers[k % width]!;
		return supplier.withdrawn ? NaN : p - tab.items[Math.floor(k / width)]!.adder;
	});
	const { lines, totals } = screenBids({
		items: tab.items.map((i) => ({ quantity: i.quantity, baseline: i.baselineUnitPrice })),
		suppliers: width,
		prices
	});
	const flags: LowFlag[] = [
		...lines.map((l) => ({
			supplierId: tab.suppliers[l.supplier]!.id,
			supplier: tab.suppliers[l.supplier]!.name,
			item: tab.items[l.item]!.ref,
			row: l.item,
			column: l.supplier,
			price: l.price,
			reasons: l.reasons
		})),
		...totals.map((t) => ({
			supplierId: tab.suppliers[t.supplier]!.id,
			supplier: tab.suppliers[t.supplier]!.name,
			item: null,
			row: null,
			column: t.supplier,
			price: t.total,
			reasons: t.reasons
		}))
	];
	screened.set(tab, flags);
	return flags;
}

/** A flag in plain words, in the event's currency. */
export function describeFlag(flag: LowFlag, currency: string): string {
	const money = (v: number) => (flag.item === null ? formatMoney(v, currency) : formatUnitPrice(v, currency));
	return flag.reasons.map((r) => describeLowReason(r, money)).join('; ');
}
