// Plain data shapes that the sheets (reading files), the db modules (storing rows) and the services share.
// They live here, below all three, so that neither the sheets import the db modules nor the other way.

/** An event's line item as the buyer enters or imports it. */
export interface ItemFields {
	ref: string;
	description: string;
	lot: string | null;
	quantity: number;
	unit: string;
	baselineUnitPrice: number | null;
	freightPerUnit: number | null;
	dutyPerUnit: number | null;
	/** The item is ordered in multiples of this (whole steps: award/core/units.ts); null when not. */
	orderMultiple: number | null;
}

export interface BidLine {
	item: string;
	unitPrice: number;
	maxQuantity: number | null;
	/** The supplier sells this item in packs of this many units: it is awarded whole packs. Absent: any amount. */
	packSize?: number | null;
	priceBreaks: { fromQuantity: number; unitPrice: number }[];
}

/** A whole, valid bid: what a sheet or the on-screen table becomes, and what a revision stores. */
export interface ParsedBid {
	lines: BidLine[];
	capacity: number | null;
	bundles: { ref: string; price: number; items: { item: string; quantity: number }[] }[];
	/** The ISO 4217 code every price of the bid is in, when not the event currency (absent: the event's). */
	currency?: string;
	/** Answers to the event's supplier-answered criteria, by criterion ref; absent when it has none. */
	answers?: Record<string, number>;
}

/** One problem found in a file, with where it is. */
export interface SheetProblem {
	sheet: string;
	row: number | null;
	column: string | null;
	message: string;
}
