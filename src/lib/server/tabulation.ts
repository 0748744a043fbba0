// The opened-bids tabulation: every item against every current bid, at landed unit prices, with the lowest
// price of each item, each supplier's totals and the cherry-picking total. Computed once per event and set
// of bid revisions (bids do not change after the deadline) and then filtered, sorted and paged on the server,
// so 5,000 items x 50 suppliers cost one pass of arithmetic and each page only its own rows.
//
// Prices are compared at the item's whole quantity: a bid's all-units price break applies when the item's
// quantity (or the bid's maximum quantity, if lower) reaches it, and the item's freight and duty adders are
// added (landed cost, as the award runs price it). Capacities, maximum quantities and award rules are not
// applied: the cherry-picking total is the lowest figure before any of them (common practice).
import { priceAtQuantity } from '$lib/award/core/prices';
import type { VisibleBid } from './db/bids';
import type { ItemRow } from './db/events';

export interface TabulatedItem {
	id: string;
	ref: string;
	description: string;
	lot: string | null;
	quantity: number;
	unit: string;
	orderMultiple: number | null;
	baselineUnitPrice: number | null;
	/** Freight and duty per unit, added to every bid's price. */
	adder: number;
	/** Lowest landed unit price of any bid, and the columns (suppliers) that offer it. */
	lowest: number | null;
	lowestBy: number[];
	bids: number;
}

export interface TabulatedBundle {
	ref: string;
	price: number;
	items: { item: string; quantity: number }[];
}

export interface TabulatedSupplier {
	id: string;
	name: string;
	withdrawn: boolean;
	revision: number;
	submittedAt: string;
	/** Units over the event the bid will supply at most (null: no limit stated). */
	capacity: number | null;
	bundles: TabulatedBundle[];
	itemsBid: number;
	/** Share of the event's items the bid prices. */
	itemShare: number;
	/** Share of the baseline value of items with a baseline that the bid prices (null: no baselines). */
	baselineShare: number | null;
	/** The bid's landed total for the items it prices, each at its whole quantity. */
	total: number;
	/** Baseline value of the priced items that have a baseline, and the bid's total for those same items. */
	baselineOfPriced: number;
	totalOfBaselined: number;
	/** Items where the bid is lowest (ties count for each), and their value at its prices. */
	lowestItems: number;
	lowestValue: number;
	/** A bid in another currency than the event's (prices above are converted); absent: the event's. */
	bidCurrency?: { code: string; rate: number; total: number };
}

export interface TabulationSummary {
	items: number;
	itemsWithBids: number;
	/** Sum of baseline x quantity over items with a baseline; null when no item has one. */
	baselineTotal: number | null;
	/** Each item with a bid at its lowest landed price, whole quantity: the cherry-picking total. */
	cherryPickTotal: number;
	/** Baseline value of the items in the cherry-picking total that have a baseline, and their lowest value. */
	cherryPickBaseline: number;
	cherryPickOfBaselined: number;
}

/** A price break, pack size or maximum quantity as the cell shows it under the price. */
export interface CellNotes {
	breaks: { fromQuantity: number; unitPrice: number }[];
	basePrice: number;
	maxQuantity: number | null;
	packSize: number | null;
}

export interface Tabulated {
	items: TabulatedItem[];
	suppliers: TabulatedSupplier[];
	/** Landed unit price at the item's quantity, row-major (item x supplier); NaN where no price. */
	prices: number[];
	/** The bid's own terms where it has any beyond one price (breaks, packs, a maximum); else null. */
	notes: (CellNotes | null)[];
	summary: TabulationSummary;
}

/** Two prices this close (relative) are the same lowest price: ties are marked on every bid. */
const TIE = 1e-9;

export function tabulate(itemRows: readonly ItemRow[], bids: readonly VisibleBid[]): Tabulated {
	const num = (v: string | null) => (v === null ? null : Number(v));
	const items: TabulatedItem[] = itemRows.map((i) => ({
		id: i.id,
		ref: i.ref,
		description: i.description,
		lot: i.lot_ref,
		quantity: Number(i.quantity),
		unit: i.unit,
		orderMultiple: num(i.order_multiple),
		baselineUnitPrice: num(i.baseline_unit_price),
		adder: (num(i.freight_per_unit) ?? 0) + (num(i.duty_per_unit) ?? 0),
		lowest: null,
		lowestBy: [],
		bids: 0
	}));
	const row = new Map(items.map((item, r) => [item.ref, r]));
	const width = bids.length;
	const prices = new Array<number>(items.length * width).fill(NaN);
	const notes = new Array<CellNotes | null>(items.length * width).fill(null);
	bids.forEach((bid, c) => {
		for (const line of bid.lines) {
			const r = row.get(line.item);
			if (r === undefined) continue;
			const item = items[r]!;
			const base = Number(line.unitPrice);
			const breaks = line.priceBreaks.map((b) => ({
				fromQuantity: Number(b.fromQuantity),
				unitPrice: Number(b.unitPrice)
			}));
			const maxQuantity = num(line.maxQuantity);
			const reached = Math.min(item.quantity, maxQuantity ?? Infinity);
			prices[r * width + c] = priceAtQuantity({ unitPrice: base, priceBreaks: breaks }, reached) + item.adder;
			const packSize = num(line.packSize);
			if (breaks.length || maxQuantity !== null || packSize !== null)
				notes[r * width + c] = { breaks, basePrice: base, maxQuantity, packSize };
		}
	});
	const summary: TabulationSummary = {
		items: items.length,
		itemsWithBids: 0,
		baselineTotal: null,
		cherryPickTotal: 0,
		cherryPickBaseline: 0,
		cherryPickOfBaselined: 0
	};
	const suppliers: TabulatedSupplier[] = bids.map((bid) => ({
		id: bid.supplierOrganisationId,
		name: bid.supplierName,
		withdrawn: bid.source === 'withdrawal',
		revision: bid.revision,
		submittedAt: bid.submittedAt.toISOString(),
		capacity: num(bid.capacity),
		bundles: bid.bundles.map((b) => ({
			ref: b.ref,
			price: Number(b.price),
			items: b.items.map((i) => ({ item: i.item, quantity: Number(i.quantity) }))
		})),
		itemsBid: 0,
		itemShare: 0,
		baselineShare: null,
		total: 0,
		baselineOfPriced: 0,
		totalOfBaselined: 0,
		lowestItems: 0,
		lowestValue: 0
	}));
	let baselineTotal = 0;
	let baselined = 0;
	items.forEach((item, r) => {
		const baseline = item.baselineUnitPrice === null ? null : item.baselineUnitPrice * item.quantity;
		if (baseline !== null) {
			baselineTotal += baseline;
			baselined++;
		}
		let lowest = Infinity;
		for (let c = 0; c < width; c++) {
			const price = prices[r * width + c]!;
			if (Number.isNaN(price)) continue;
			item.bids++;
			lowest = Math.min(lowest, price);
			const supplier = suppliers[c]!;
			supplier.itemsBid++;
			supplier.total += price * item.quantity;
			if (baseline !== null) {
				supplier.baselineOfPriced += baseline;
				supplier.totalOfBaselined += price * item.quantity;
			}
		}
		if (!item.bids) return;
		item.lowest = lowest;
		for (let c = 0; c < width; c++) {
			const price = prices[r * width + c]!;
			if (price <= lowest + TIE * Math.abs(lowest)) {
				item.lowestBy.push(c);
				suppliers[c]!.lowestItems++;
				suppliers[c]!.lowestValue += price * item.quantity;
			}
		}
		summary.itemsWithBids++;
		summary.cherryPickTotal += lowest * item.quantity;
		if (baseline !== null) {
			summary.cherryPickBaseline += baseline;
			summary.cherryPickOfBaselined += lowest * item.quantity;
		}
	});
	if (baselined) summary.baselineTotal = baselineTotal;
	for (const supplier of suppliers) {
		supplier.itemShare = items.length ? supplier.itemsBid / items.length : 0;
		supplier.baselineShare =
			baselined && baselineTotal > 0 ? supplier.baselineOfPriced / baselineTotal : null;
	}
	return { items, suppliers, prices, notes, summary };
}

/** What a buyer asks of the tabulation: filters, a sort and a page (all optional, all checked). */
export interface TabulationQuery {
	/** A lot's ref, or '' for items in no lot. */
	lot?: string;
	/** Only items priced by this supplier (organisation id). */
	bidder?: string;
	/** Only items where this supplier (organisation id) has the lowest price, ties included. */
	lowest?: string;
	/** Text in the item's ref or description (case-insensitive). */
	text?: string;
	/** 'position' (the event's order), 'ref', 'description', 'lot', 'quantity', 'baseline',
	 * 'baselineTotal', 'lowest', 'bids', 'spread', or a supplier's organisation id for its price. */
	sort?: string;
	descending?: boolean;
	page?: number;
	pageSize: number;
}

export const TABULATION_SORTS = [
	'position',
	'ref',
	'description',
	'lot',
	'quantity',
	'baseline',
	'baselineTotal',
	'lowest',
	'bids',
	'spread'
] as const;

export interface TabulationView {
	/** Row indexes of this page, in order. */
	rows: number[];
	matched: number;
	page: number;
	pages: number;
}

/**
 * The rows a query selects, sorted (items without the sorted figure last, whichever the direction; ties
 * in the event's order) and cut to one page (a page past the end is the last page).
 */
export function viewTabulation(tab: Tabulated, query: TabulationQuery): TabulationView {
	const width = tab.suppliers.length;
	const column = (id: string | undefined) => (id ? tab.suppliers.findIndex((s) => s.id === id) : -1);
	const bidder = column(query.bidder);
	const lowest = column(query.lowest);
	const text = query.text?.trim().toLocaleLowerCase() ?? '';
	let rows: number[] = [];
	tab.items.forEach((item, r) => {
		if (query.lot !== undefined && (item.lot ?? '') !== query.lot) return;
		if (query.bidder && (bidder < 0 || Number.isNaN(tab.prices[r * width + bidder]!))) return;
		if (query.lowest && (lowest < 0 || !item.lowestBy.includes(lowest))) return;
		if (text && !`${item.ref}\n${item.description}`.toLocaleLowerCase().includes(text)) return;
		rows.push(r);
	});
	const key = sortKey(tab, query.sort);
	if (key) {
		const direction = query.descending ? -1 : 1;
		const keys = new Map(rows.map((r) => [r, key(r)]));
		rows = rows.sort((a, b) => {
			const [x, y] = [keys.get(a)!, keys.get(b)!];
			const missing = Number(x === null) - Number(y === null);
			if (missing) return missing;
			const order = typeof x === 'string' ? x.localeCompare(y as string) : (x as number) - (y as number);
			return order ? order * direction : a - b;
		});
	} else if (query.descending) rows.reverse();
	const pages = Math.max(1, Math.ceil(rows.length / query.pageSize));
	const wanted = Number.isInteger(query.page) && query.page! > 1 ? query.page! : 1;
	const page = Math.min(wanted, pages);
	return {
		rows: rows.slice((page - 1) * query.pageSize, page * query.pageSize),
		matched: rows.length,
		page,
		pages
	};
}

/** The figure a sort orders rows by; null when the row has none (it goes last). */
function sortKey(tab: Tabulated, sort: string | undefined): ((r: number) => string | number | null) | null {
	const width = tab.suppliers.length;
	const item = (r: number) => tab.items[r]!;
	switch (sort) {
		case undefined:
		case 'position':
			return null;
		case 'ref':
			return (r) => item(r).ref;
		case 'description':
			return (r) => item(r).description;
		case 'lot':
			return (r) => item(r).lot;
		case 'quantity':
			return (r) => item(r).quantity;
		case 'baseline':
			return (r) => item(r).baselineUnitPrice;
		case 'baselineTotal':
			return (r) =>
				item(r).baselineUnitPrice === null ? null : item(r).baselineUnitPrice! * item(r).quantity;
		case 'lowest':
			return (r) => item(r).lowest;
		case 'bids':
			return (r) => item(r).bids;
		case 'spread':
			// How far the second-lowest price is above the lowest: where competition is thin.
			return (r) => {
				const offered = [];
				for (let c = 0; c < width; c++) {
					const p = tab.prices[r * width + c]!;
					if (!Number.isNaN(p)) offered.push(p);
				}
				if (offered.length < 2) return null;
				offered.sort((a, b) => a - b);
				return offered[0]! > 0 ? (offered[1]! - offered[0]!) / offered[0]! : null;
			};
		default: {
			const c = tab.suppliers.findIndex((s) => s.id === sort);
			if (c < 0) return null;
			return (r) => {
				const p = tab.prices[r * width + c]!;
				return Number.isNaN(p) ? null : p;
			};
		}
	}
}
