// The opened-bids tabulation is paged on the server: each page reads and shows only its items' prices
// (issue 10, pages fast under load), with the seal and access checks of the whole tab unchanged.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeTestDb } from '../support/factories';
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
const deadline = new Date(Date.now() + 15_000);
// Two pages: a full one and 30 items on the second.
const ITEMS = PAGE + 30;
// Item k (from 1) gets the unit price k + 0.37 from the first supplier: a price names its item.
const priceOf = (k: number) => `${k}.37`;

beforeAll(async () => {
	const staff = await aSignedInUser('buyer');
	buyer = staff.client;
	const { organisation, user } = await aSupplierOrganisationWithUser();
	event = await anOpenEvent({ createdBy: staff.user.id, invite: [organisation.id], items: ITEMS, deadline });
	const supplier = await signedIn(user);
	const template = await (await supplier.get(`/api/events/${event.id}/bid-sheet?format=csv`)).text();
	const [header, ...rows] = template.trim().split('\r\n');
	const csv = [header, ...rows.map((row, k) => `${row},${priceOf(k + 1)}`)].join('\r\n');
	expect((await uploadSheet(supplier, event.id, Buffer.from(csv), 'bid.csv')).status).toBe(201);
	await untilPast(deadline);
});

afterAll(closeTestDb);

const tab = async (query = '') => {
	const response = await buyer.get(`/buyer/events/${event.id}/bids${query}`);
	expect(response.status).toBe(200);
	return response.text();
};
const shown = (page: string, k: number) => page.includes(`IT-${k} Test item ${k}<`);

describe('the opened-bids tabulation, a page at a time', () => {
	it(`shows the first ${PAGE} items with their prices and none of the rest`, async () => {
		const page = await tab();
		expect(page).toContain('Page 1 of 2');
		expect(shown(page, 1) && shown(page, PAGE)).toBe(true);
		expect(shown(page, PAGE + 1)).toBe(false);
		expect(page).toContain(priceOf(PAGE));
		// Neither the item nor its price travels in the page's data.
		expect(page).not.toContain(priceOf(PAGE + 1));
		expect(page).not.toContain(`IT-${ITEMS}`);
	});

	it('shows the last items on page 2, and the last page for a page past the end', async () => {
		for (const query of ['?page=2', '?page=99']) {
			const page = await tab(query);
			expect(page).toContain('Page 2 of 2');
			expect(shown(page, PAGE + 1) && shown(page, ITEMS)).toBe(true);
			expect(page).toContain(priceOf(ITEMS));
			expect(shown(page, PAGE)).toBe(false);
			expect(page).not.toContain(priceOf(PAGE));
		}
	});

	it('treats a page that is not a number as the first', async () => {
		for (const query of ['?page=abc', '?page=-3', '?page=0'])
			expect(await tab(query)).toContain('Page 1 of 2');
	});
});
