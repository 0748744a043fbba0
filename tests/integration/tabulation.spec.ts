// The opened-bids tabulation (the Bids tab after the deadline): its figures are checked against figures this
// test computes on its own from the rows stored in the database (bid lines, price breaks, items), with the
// trade's definitions as DOMAIN.md states them (landed cost = price + freight + duty; an all-units break
// applies once the quantity reaches it; the cherry-picking total is each item at its lowest price: common
// practice). Filters, sorts and pages are applied on the server: a page carries only its own items.
import ExcelJS from 'exceljs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeTestDb, testDb } from '../support/factories';
import {
	aSignedInUser,
	aSupplierOrganisationWithUser,
	anOpenEvent,
	signedIn,
	untilPast,
	uploadSheet,
	type TestEvent
} from '../support/events';
import type { Browserless } from '../support/http';
import { TABULATION_PAGE_ITEMS as PAGE } from '../../src/lib/paging';

let buyer: Browserless;
let event: TestEvent;
const deadline = new Date(Date.now() + 20_000);
// More than one page: a full one and 12 on the second.
const ITEMS = PAGE + 12;
const suppliers: { id: string; name: string }[] = [];

/** Item k (from 1): A prices every item at k + 0.37 (IT-1 with a break from 100 units at 0.90); B prices
 * odd items at k + 0.30; C items 1-5 at k + 0.40, but IT-2 at 2.37 (a tie with A). */
const priceOf = {
	A: (k: number) => `${k}.37`,
	B: (k: number) => (k % 2 ? `${k}.30` : null),
	C: (k: number) => (k === 2 ? '2.37' : k <= 5 ? `${k}.40` : null)
};

beforeAll(async () => {
	const staff = await aSignedInUser('buyer');
	buyer = staff.client;
	const bidders = await Promise.all([0, 1, 2].map(() => aSupplierOrganisationWithUser()));
	event = await anOpenEvent({
		createdBy: staff.user.id,
		invite: bidders.map((b) => b.organisation.id),
		items: ITEMS,
		deadline,
		allowPriceBreaks: true
	});
	// Baselines on every item but IT-2 (k + 0.50), freight on IT-3, a second lot IT-4..IT-10, IT-11 in none.
	const db = testDb();
	const [l2] = await db('lots').insert({ event_id: event.id, ref: 'L2', title: 'Lot 2' }).returning('id');
	for (let k = 1; k <= ITEMS; k++)
		await db('items')
			.where({ event_id: event.id, ref: `IT-${k}` })
			.update({
				baseline_unit_price: k === 2 ? null : `${k}.50`,
				freight_per_unit: k === 3 ? '0.25' : null,
				...(k >= 4 && k <= 10 ? { lot_id: l2.id } : k === 11 ? { lot_id: null } : {})
			});
	for (const [n, name] of (['A', 'B', 'C'] as const).entries()) {
		const { organisation, user } = bidders[n]!;
		suppliers.push({ id: organisation.id, name: organisation.name });
		const client = await signedIn(user);
		const template = await (await client.get(`/api/events/${event.id}/bid-sheet?format=csv`)).text();
		const [header, ...rows] = template.trim().split('\r\n');
		const columns = header!.split(',');
		const at = (title: string) => columns.findIndex((c) => c.startsWith(title));
		const csv = [
			header,
			...rows.map((row, k) => {
				const cells = row.split(',');
				while (cells.length < columns.length) cells.push('');
				cells[at('Unit price')] = priceOf[name](k + 1) ?? '';
				if (name === 'A' && k === 0) {
					cells[at('Break 1 from quantity')] = '100';
					cells[at('Break 1 unit price')] = '0.90';
				}
				return cells.join(',');
			})
		].join('\r\n');
		const response = await uploadSheet(client, event.id, Buffer.from(csv), 'bid.csv');
		expect(response.status, await response.clone().text()).toBe(201);
	}
	await untilPast(deadline);
}, 60_000);

afterAll(closeTestDb);

/** The figures, computed here from the stored rows alone. */
async function independently() {
	const db = testDb();
	const items: { id: string; ref: string; quantity: string; baseline: string | null; adder: string }[] =
		await db('items')
			.where({ event_id: event.id })
			.select(
				'id',
				'ref',
				'quantity',
				'baseline_unit_price as baseline',
				db.raw('coalesce(freight_per_unit, 0) + coalesce(duty_per_unit, 0) as adder')
			)
			.orderBy('position');
	const lines: { id: string; item_id: string; supplier: string; unit_price: string }[] = await db(
		'bid_lines as l'
	)
		.join('bid_revisions as r', 'r.id', 'l.revision_id')
		.where('r.event_id', event.id)
		.select('l.id', 'l.item_id', 'r.supplier_organisation_id as supplier', 'l.unit_price');
	const breaks: { bid_line_id: string; from_quantity: string; unit_price: string }[] = await db(
		'price_breaks'
	)
		.whereIn(
			'bid_line_id',
			lines.map((l) => l.id)
		)
		.select('bid_line_id', 'from_quantity', 'unit_price');
	const price = new Map<string, number>();
	for (const l of lines) {
		const item = items.find((i) => i.id === l.item_id)!;
		const reached = breaks
			.filter((b) => b.bid_line_id === l.id && Number(b.from_quantity) <= Number(item.quantity))
			.sort((a, b) => Number(b.from_quantity) - Number(a.from_quantity))[0];
		price.set(`${item.ref}|${l.supplier}`, Number(reached?.unit_price ?? l.unit_price) + Number(item.adder));
	}
	const lowest = new Map<string, { price: number; by: string[] }>();
	for (const item of items) {
		const offers = suppliers.flatMap((s) => {
			const p = price.get(`${item.ref}|${s.id}`);
			return p === undefined ? [] : [{ p, s: s.id }];
		});
		if (!offers.length) continue;
		const min = Math.min(...offers.map((o) => o.p));
		lowest.set(item.ref, { price: min, by: offers.filter((o) => o.p === min).map((o) => o.s) });
	}
	const quantity = (ref: string) => Number(items.find((i) => i.ref === ref)!.quantity);
	const cherryPick = [...lowest].reduce((a, [ref, l]) => a + l.price * quantity(ref), 0);
	const baselineTotal = items.reduce(
		(a, i) => a + (i.baseline === null ? 0 : Number(i.baseline) * Number(i.quantity)),
		0
	);
	const perSupplier = suppliers.map((s) => {
		const priced = items.filter((i) => price.has(`${i.ref}|${s.id}`));
		const baselinedPriced = priced.filter((i) => i.baseline !== null);
		return {
			id: s.id,
			itemsBid: priced.length,
			total: priced.reduce((a, i) => a + price.get(`${i.ref}|${s.id}`)! * Number(i.quantity), 0),
			baselineShare:
				baselinedPriced.reduce((a, i) => a + Number(i.baseline) * Number(i.quantity), 0) / baselineTotal,
			lowestItems: [...lowest.values()].filter((l) => l.by.includes(s.id)).length
		};
	});
	return { items, price, lowest, cherryPick, baselineTotal, perSupplier };
}

const tabulationJson = async (query: string) => {
	const response = await buyer.get(`/api/events/${event.id}/tabulation${query}`, 'application/json');
	expect(response.status).toBe(200);
	return response.json();
};

const page = async (query = '') => {
	const response = await buyer.get(`/buyer/events/${event.id}/bids${query}`);
	expect(response.status).toBe(200);
	return response.text();
};
const shows = (html: string, k: number) => html.includes(`>IT-${k}</span>`);

describe('the tabulation’s figures', () => {
	it('marks each item’s lowest landed price and totals each supplier as the stored bids say', async () => {
		const mine = await independently();
		// The fixture works as meant: A's break reached on IT-1, freight on IT-3, A and C tied on IT-2.
		expect(mine.price.get(`IT-1|${suppliers[0]!.id}`)).toBeCloseTo(0.9, 12);
		expect(mine.price.get(`IT-3|${suppliers[1]!.id}`)).toBeCloseTo(3.55, 12);
		expect(mine.lowest.get('IT-2')!.by).toHaveLength(2);
		const served = await tabulationJson('?pageSize=500');
		expect(served.items).toHaveLength(ITEMS);
		for (const item of served.items) {
			const expected = mine.lowest.get(item.ref);
			expect(item.lowest).toBeCloseTo(expected!.price, 9);
			expect([...item.lowestBy].sort()).toEqual([...expected!.by].sort());
			for (const s of suppliers) {
				const p = mine.price.get(`${item.ref}|${s.id}`);
				if (p === undefined) expect(item.prices[s.id]).toBeUndefined();
				else expect(item.prices[s.id]).toBeCloseTo(p, 9);
			}
		}
		expect(served.summary.cherryPickTotal).toBeCloseTo(mine.cherryPick, 6);
		expect(served.summary.baselineTotal).toBeCloseTo(mine.baselineTotal, 6);
		for (const expected of mine.perSupplier) {
			const got = served.suppliers.find((s: { id: string }) => s.id === expected.id);
			expect(got.itemsBid).toBe(expected.itemsBid);
			expect(got.itemShare).toBeCloseTo(expected.itemsBid / ITEMS, 12);
			expect(got.total).toBeCloseTo(expected.total, 6);
			expect(got.baselineShare).toBeCloseTo(expected.baselineShare, 9);
			expect(got.lowestItems).toBe(expected.lowestItems);
		}
	});

	it('shows the same figures on the page, formatted, with the lowest marked in words', async () => {
		const mine = await independently();
		const html = await page();
		const euros = new Intl.NumberFormat('en', { minimumFractionDigits: 2, maximumFractionDigits: 2 });
		expect(html).toContain(euros.format(mine.cherryPick));
		expect(html).toContain(euros.format(mine.baselineTotal));
		// Every item of the first page has at least one cell marked lowest, in text.
		const marked = html.match(/data-lowest=""/g) ?? [];
		const onPage = [...mine.lowest.keys()].slice(0, PAGE);
		const expectedMarks = onPage.reduce((a, ref) => a + mine.lowest.get(ref)!.by.length, 0);
		expect(marked).toHaveLength(expectedMarks);
		expect(html.match(/>lowest</g)).toHaveLength(expectedMarks);
	});
});

describe('filters, sorting and pages on the server', () => {
	it('pages: the first page carries its items and none of the rest', async () => {
		const first = await page();
		expect(first).toContain('Page 1 of 2');
		expect(shows(first, 1) && shows(first, PAGE)).toBe(true);
		expect(shows(first, PAGE + 1)).toBe(false);
		expect(first).not.toContain(`IT-${ITEMS}<`);
		for (const query of ['?page=2', '?page=99']) {
			const last = await page(query);
			expect(last).toContain('Page 2 of 2');
			expect(shows(last, ITEMS) && !shows(last, PAGE)).toBe(true);
		}
		for (const query of ['?page=abc', '?page=-3']) expect(await page(query)).toContain('Page 1 of 2');
	});

	it('filters by lot, by bidder and by lowest supplier', async () => {
		const lot = await tabulationJson('?lot=L2');
		expect(lot.items.map((i: { ref: string }) => i.ref)).toEqual(
			[4, 5, 6, 7, 8, 9, 10].map((k) => `IT-${k}`)
		);
		const html = await page('?lot=L2');
		expect(shows(html, 4) && shows(html, 10)).toBe(true);
		expect(shows(html, 1) || shows(html, 11)).toBe(false);
		expect((await tabulationJson('?lot=-')).items.map((i: { ref: string }) => i.ref)).toEqual(['IT-11']);

		const [a, b, c] = suppliers;
		const byC = await tabulationJson(`?bidder=${c!.id}`);
		expect(byC.items.map((i: { ref: string }) => i.ref)).toEqual(['IT-1', 'IT-2', 'IT-3', 'IT-4', 'IT-5']);
		const mine = await independently();
		const lowestB = [...mine.lowest].filter(([, l]) => l.by.includes(b!.id)).map(([ref]) => ref);
		const served = await tabulationJson(`?lowest=${b!.id}&pageSize=500`);
		expect(served.items.map((i: { ref: string }) => i.ref)).toEqual(lowestB);
		expect(lowestB.length).toBeGreaterThan(0);
		// An unknown supplier matches nothing rather than everything.
		expect((await tabulationJson(`?lowest=${a!.id.replace(/.$/, '0')}x`)).matched).toBe(0);
		// A filter that matches nothing says so on the page.
		expect(await page('?q=no-such-item')).toContain('No item matches these filters.');
	});

	it('sorts by a supplier’s price, items it did not price last in either direction', async () => {
		const b = suppliers[1]!;
		for (const dir of ['asc', 'desc']) {
			const served = await tabulationJson(`?sort=${b.id}&dir=${dir}&pageSize=500`);
			const prices = served.items.map((i: { prices: Record<string, number> }) => i.prices[b.id] ?? null);
			const priced = prices.filter((p: number | null) => p !== null);
			expect(prices.slice(0, priced.length)).toEqual(priced);
			const sorted = [...priced].sort((x, y) => (dir === 'asc' ? x - y : y - x));
			expect(priced).toEqual(sorted);
		}
	});
});

describe('the tabulation as a workbook', () => {
	it('has a frozen header, an autofilter, number formats and the figures of the page', async () => {
		const response = await buyer.get(`/api/events/${event.id}/tabulation?format=xlsx&lot=L2`);
		expect(response.status).toBe(200);
		const workbook = new ExcelJS.Workbook();
		await workbook.xlsx.load((await response.arrayBuffer()) as ArrayBuffer);
		const sheet = workbook.getWorksheet('Prices')!;
		expect(sheet.views[0]).toMatchObject({ state: 'frozen', ySplit: 1 });
		expect(sheet.autoFilter).toBeTruthy();
		expect(sheet.rowCount).toBe(1 + 7);
		const header = (sheet.getRow(1).values as string[]).slice(1);
		const mine = await independently();
		const a = suppliers[0]!;
		const column = header.indexOf(a.name) + 1;
		const row = sheet.getRow(2);
		expect(row.getCell(1).value).toBe('IT-4');
		expect(row.getCell(column).value).toBeCloseTo(mine.price.get(`IT-4|${a.id}`)!, 9);
		expect(row.getCell(column).numFmt).toMatch(/^#,##0\.00/);
		const totals = workbook.getWorksheet('Suppliers')!;
		expect(totals.getRow(2).getCell(7).numFmt).toBe('#,##0.00');
	});
});

describe('before the deadline', () => {
	it('is sealed: no tabulation, no prices', async () => {
		const staff = await aSignedInUser('buyer');
		const { organisation } = await aSupplierOrganisationWithUser();
		const sealed = await anOpenEvent({ createdBy: staff.user.id, invite: [organisation.id] });
		const response = await staff.client.get(`/api/events/${sealed.id}/tabulation`, 'application/json');
		expect(response.status).toBe(409);
		const html = await (await staff.client.get(`/buyer/events/${sealed.id}/bids`)).text();
		expect(html).toContain('Bids are sealed until the deadline');
		expect(html).not.toContain('Prices by item');
	});
});
