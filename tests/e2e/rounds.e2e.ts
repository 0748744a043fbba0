// A second round in Chromium: the buyer starts it from the Bids tab with rank feedback (a form without a
// supplier is refused beside the field), the invited supplier reads only its own rank and revises on
// screen, and once the round's deadline has passed (the server's clock moved two days on) the Bids tab
// shows its change between the rounds.
//
// Bids: A 10.00 and 20.00, B 11.00 and 19.00 a unit for 100 and 200 units. A is 1st on IT-1 and 2nd on
// IT-2 (by hand). A revises IT-2 to 18.00: 10 × 100 + 20 × 200 = 5,000.00 becomes 10 × 100 + 18 × 200
// = 4,600.00, a change of −400.00 (−400 / 5,000 = −8.0%).
import { rmSync, writeFileSync } from 'node:fs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { browserHelpers, openBrowser, type OpenBrowser } from '../support/browser';
import { appUrl } from '../support/env';
import {
	aSupplierOrganisationWithUser,
	anOpenEvent,
	fillSheet,
	signedIn,
	untilPast,
	uploadSheet,
	type TestEvent
} from '../support/events';
import { aUser, closeTestDb, type TestUser } from '../support/factories';

let browser: OpenBrowser;
const { expectAccessible, signInAsStaff, signInBySupplierLink } = browserHelpers(() => browser);
const clockFile = () => process.env.CLOCK_OFFSET_FILE;
let buyer: TestUser;
let event: TestEvent;
let bidders: Awaited<ReturnType<typeof aSupplierOrganisationWithUser>>[];

beforeAll(async () => {
	browser = await openBrowser();
	buyer = await aUser('buyer');
	bidders = await Promise.all([aSupplierOrganisationWithUser(), aSupplierOrganisationWithUser()]);
	const deadline = new Date(Date.now() + 12_000);
	event = await anOpenEvent({
		createdBy: buyer.id,
		invite: bidders.map((b) => b.organisation.id),
		items: 2,
		deadline
	});
	for (const [k, prices] of [
		[0, [10, 20]],
		[1, [11, 19]]
	] as const) {
		const client = await signedIn(bidders[k]!.user);
		const sheet = Buffer.from(await (await client.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer());
		const filled = await fillSheet(sheet, { 'IT-1': [prices[0]], 'IT-2': [prices[1]] });
		expect((await uploadSheet(client, event.id, filled)).status).toBe(201);
	}
	await untilPast(deadline);
}, 60_000);

afterAll(async () => {
	if (clockFile()) rmSync(clockFile()!, { force: true });
	await browser?.close();
	await closeTestDb();
});

describe('a second round, in a browser', () => {
	it('starts a round with rank feedback, takes a revised bid and shows the change once it opens', async () => {
		const { page } = browser;
		const [a, b] = bidders as [(typeof bidders)[number], (typeof bidders)[number]];
		await signInAsStaff(buyer.email, buyer.password!);
		await page.goto(`${appUrl()}/buyer/events/${event.id}/bids`);
		for (const bidder of bidders) await page.getByLabel(bidder.organisation.name, { exact: true }).uncheck();
		await page.getByRole('button', { name: 'Start the round' }).click();
		await expect
			.poll(() => page.getByTestId('rounds').textContent())
			.toContain('Choose at least one supplier to invite to the new round.');
		for (const bidder of bidders) await page.getByLabel(bidder.organisation.name, { exact: true }).check();
		await page.getByLabel('Its own rank').check();
		await page.getByRole('button', { name: 'Start the round' }).click();
		await expect.poll(() => page.getByTestId('round-open').textContent()).toContain('Round 2 open until');
		await expectAccessible('bids page, round 2 open');

		await signInBySupplierLink(a.user.email);
		await page.goto(`${appUrl()}/supplier/events/${event.id}`);
		const feedback = await page.getByTestId('my-feedback').innerText();
		expect(feedback).toContain('Item IT-1: 1st: your price is the lowest');
		expect(feedback).toContain('Item IT-2: 2nd lowest price');
		expect(await page.locator('body').innerText()).not.toContain(b.organisation.name);
		await page.getByLabel(/^Unit price.*, IT-2$/).fill('18');
		await page.getByRole('button', { name: 'Save the prices as a new revision' }).click();
		await expect
			.poll(() => page.getByTestId('action-status').last().textContent())
			.toContain('Accepted as revision 2');
		await expectAccessible('supplier page, round 2');

		// Sealed: the buyer still sees round 1 only.
		await signInAsStaff(buyer.email, buyer.password!);
		await page.goto(`${appUrl()}/buyer/events/${event.id}/bids`);
		expect(await page.getByTestId('rounds').innerText()).not.toContain('Change from round 1 to round 2');
		writeFileSync(clockFile()!, JSON.stringify({ offsetMs: 2 * 24 * 3600_000 }));
		try {
			await page.reload();
			const changes = page.getByTestId('round-changes');
			await expect.poll(() => changes.innerText()).toContain('5,000.00');
			expect(await changes.innerText()).toContain('4,600.00');
			expect(await changes.innerText()).toContain('−400.00 (−8.0%)');
			await expectAccessible('bids page, round 2 opened');
		} finally {
			rmSync(clockFile()!, { force: true });
		}
	}, 120_000);
});
