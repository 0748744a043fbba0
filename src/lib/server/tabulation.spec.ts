// The tabulation's arithmetic on a case small enough to work by hand. The definitions (landed cost = price
// + freight + duty; the all-units break a quantity reaches; the cherry-picking total as each item at its
// lowest price) are the trade's common practice, as DOMAIN.md states them; every expected figure below is
// worked out in the comment beside it.
import { describe, expect, it } from 'vitest';
import type { VisibleBid } from './db/bids';
import type { ItemRow } from './db/events';
import { tabulate, viewTabulation } from './tabulation';

const item = (ref: string, quantity: number, more: Partial<ItemRow> = {}): ItemRow => ({
	id: `id-${ref}`,
	event_id: 'e',
	lot_id: null,
	lot_ref: null,
	ref,
	description: `Item ${ref}`,
	quantity: String(quantity),
	unit: 'C62',
	baseline_unit_price: null,
	freight_per_unit: null,
	duty_per_unit: null,
	order_multiple: null,
	position: Number(ref.slice(3)),
	...more
});

const bid = (id: string, lines: VisibleBid['lines'], more: Partial<VisibleBid> = {}): VisibleBid => ({
	supplierOrganisationId: id,
	supplierName: `Supplier ${id}`,
	round: 1,
	revision: 1,
	submittedAt: new Date('2027-01-01T00:00:00Z'),
	source: 'upload',
	capacity: null,
	currency: 'EUR',
	lines,
	bundles: [],
	answers: {},
	...more
});

const line = (ref: string, price: string, more: Partial<VisibleBid['lines'][number]> = {}) => ({
	item: ref,
	unitPrice: price,
	maxQuantity: null,
	packSize: null,
	priceBreaks: [],
	...more
});

const items = [
	// 100 units, baseline 10.00, freight 0.50 a unit.
	item('IT-1', 100, { baseline_unit_price: '10', freight_per_unit: '0.5' }),
	item('IT-2', 50, { lot_ref: 'L1' }),
	// 10 units, baseline 2.00, nobody bids.
	item('IT-3', 10, { lot_ref: 'L1', baseline_unit_price: '2' })
];
const bids = [
	bid('A', [
		// 9.00, from 100 units 8.50: 100 reaches the break, landed 8.50 + 0.50 = 9.00.
		line('IT-1', '9', { priceBreaks: [{ fromQuantity: '100', unitPrice: '8.5' }] }),
		line('IT-2', '4')
	]),
	// IT-1 landed 9.00 + 0.50 = 9.50; IT-2 4.00, tied with A.
	bid('B', [line('IT-1', '9'), line('IT-2', '4')]),
	// At most 20 units: its break from 30 is never reached, so 5.00.
	bid('C', [line('IT-2', '5', { maxQuantity: '20', priceBreaks: [{ fromQuantity: '30', unitPrice: '3' }] })]),
	bid('D', [], { source: 'withdrawal' })
];

describe('the tabulation', () => {
	const tab = tabulate(items, bids);

	it('prices each bid at the item’s whole quantity, landed, and marks the lowest with ties', () => {
		expect(tab.items.map((i) => i.lowest)).toEqual([9, 4, null]);
		expect(tab.items.map((i) => i.lowestBy)).toEqual([[0], [0, 1], []]);
		expect(tab.items.map((i) => i.bids)).toEqual([2, 3, 0]);
		const at = (r: number, c: number) => tab.prices[r * bids.length + c];
		expect([at(0, 0), at(0, 1), at(1, 2)]).toEqual([9, 9.5, 5]);
		expect(Number.isNaN(at(0, 2))).toBe(true);
		expect(tab.notes[1 * bids.length + 2]).toMatchObject({ maxQuantity: 20, basePrice: 5 });
	});

	it('totals each supplier over the items it priced', () => {
		const [a, b, c, d] = tab.suppliers;
		// A: 9.00 x 100 + 4.00 x 50 = 1,100; B: 9.50 x 100 + 4.00 x 50 = 1,150; C: 5.00 x 50 = 250.
		expect([a!.total, b!.total, c!.total, d!.total]).toEqual([1100, 1150, 250, 0]);
		expect([a!.itemsBid, b!.itemsBid, c!.itemsBid, d!.itemsBid]).toEqual([2, 2, 1, 0]);
		expect(a!.itemShare).toBeCloseTo(2 / 3, 12);
		// Baselines: IT-1 10.00 x 100 = 1,000 and IT-3 2.00 x 10 = 20; A and B price IT-1 only of those.
		expect(a!.baselineShare).toBeCloseTo(1000 / 1020, 12);
		expect([a!.baselineOfPriced, a!.totalOfBaselined]).toEqual([1000, 900]);
		expect([b!.baselineOfPriced, b!.totalOfBaselined]).toEqual([1000, 950]);
		expect(c!.baselineShare).toBe(0);
		// A lowest on IT-1 and (tied) IT-2: 900 + 200; B on IT-2 only.
		expect([a!.lowestItems, a!.lowestValue, b!.lowestItems, b!.lowestValue]).toEqual([2, 1100, 1, 200]);
		expect(d!.withdrawn).toBe(true);
	});

	it('adds each priced item at its lowest price: the cherry-picking total', () => {
		expect(tab.summary).toEqual({
			items: 3,
			itemsWithBids: 2,
			baselineTotal: 1020,
			// 9.00 x 100 + 4.00 x 50.
			cherryPickTotal: 1100,
			cherryPickBaseline: 1000,
			cherryPickOfBaselined: 900
		});
	});

	it('says there is no baseline rather than zero when no item has one', () => {
		const none = tabulate([item('IT-1', 5)], [bid('A', [line('IT-1', '2')])]);
		expect(none.summary.baselineTotal).toBeNull();
		expect(none.suppliers[0]!.baselineShare).toBeNull();
	});
});

describe('filters, sorts and pages on the server', () => {
	const tab = tabulate(items, bids);
	const view = (query: Parameters<typeof viewTabulation>[1]) => viewTabulation(tab, query).rows;
	const page = { pageSize: 50 };

	it('filters by lot, by bidder, by lowest supplier and by text', () => {
		expect(view({ ...page, lot: 'L1' })).toEqual([1, 2]);
		expect(view({ ...page, lot: '' })).toEqual([0]);
		expect(view({ ...page, bidder: 'C' })).toEqual([1]);
		expect(view({ ...page, lowest: 'B' })).toEqual([1]);
		expect(view({ ...page, lowest: 'A' })).toEqual([0, 1]);
		expect(view({ ...page, text: 'it-3' })).toEqual([2]);
		// An unknown supplier matches nothing, rather than everything.
		expect(view({ ...page, lowest: 'nobody' })).toEqual([]);
	});

	it('sorts by any column, rows without the figure last either way', () => {
		expect(view({ ...page, sort: 'B' })).toEqual([1, 0, 2]);
		expect(view({ ...page, sort: 'B', descending: true })).toEqual([0, 1, 2]);
		expect(view({ ...page, sort: 'lowest' })).toEqual([1, 0, 2]);
		expect(view({ ...page, sort: 'baselineTotal', descending: true })).toEqual([0, 2, 1]);
		expect(view({ ...page, sort: 'bids', descending: true })).toEqual([1, 0, 2]);
		// IT-2: 4.00 then 4.00, no spread; IT-1: 9.00 then 9.50, 5.6%.
		expect(view({ ...page, sort: 'spread', descending: true })).toEqual([0, 1, 2]);
		expect(view({ ...page, sort: 'position', descending: true })).toEqual([2, 1, 0]);
	});

	it('pages, and shows the last page for one past the end', () => {
		expect(viewTabulation(tab, { pageSize: 2, page: 2 })).toEqual({
			rows: [2],
			matched: 3,
			page: 2,
			pages: 2
		});
		expect(viewTabulation(tab, { pageSize: 2, page: 9 }).page).toBe(2);
		expect(viewTabulation(tab, { pageSize: 2, page: -1 }).page).toBe(1);
	});
});
