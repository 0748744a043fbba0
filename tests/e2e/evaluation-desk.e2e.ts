// The buyer's evaluation desk in Chromium: a run changed by hand (a lock and a move, each priced at once),
// the rest solved again and saved as a new run, that run compared with the original, submitted, and its
// award report downloaded; axe finds nothing on each page, at a desktop's width and a phone's.
//
// Bids (no freight): A 4.00, 5.00, 6.00 and B 4.20, 4.90, 6.50 a unit for 100, 200 and 300 units. The
// lowest-cost run: IT-1 and IT-3 to A, IT-2 to B, 400 + 980 + 1,800 = 3,180.00. IT-3 locked to B costs
// 300 x 0.50 = 150.00 more; 20 of IT-2 moved from B to A 20 x 0.10 = 2.00 more: 3,332.00.
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
const { expectAccessible, signInAsStaff } = browserHelpers(() => browser);
let buyer: TestUser;
let event: TestEvent;
const names = { A: '', B: '' };

beforeAll(async () => {
	browser = await openBrowser();
	buyer = await aUser('buyer');
	const bidders = await Promise.all([aSupplierOrganisationWithUser(), aSupplierOrganisationWithUser()]);
	names.A = bidders[0].organisation.name;
	names.B = bidders[1].organisation.name;
	// Room for two browser files setting up side by side: every bid must be in before the deadline.
	const deadline = new Date(Date.now() + 20_000);
	event = await anOpenEvent({ createdBy: buyer.id, invite: bidders.map((b) => b.organisation.id), deadline });
	for (const [k, prices] of [
		[0, [4, 5, 6]],
		[1, [4.2, 4.9, 6.5]]
	] as const) {
		const client = await signedIn(bidders[k].user);
		const sheet = Buffer.from(await (await client.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer());
		const filled = await fillSheet(sheet, { 'IT-1': [prices[0]], 'IT-2': [prices[1]], 'IT-3': [prices[2]] });
		expect((await uploadSheet(client, event.id, filled)).status).toBe(201);
	}
	await untilPast(deadline);
}, 60_000);

afterAll(async () => {
	await browser?.close();
	await closeTestDb();
});

describe('the evaluation desk, in a browser', () => {
	it('changes a run by hand, saves it as a run, compares it and downloads its report', async () => {
		const { page } = browser;
		await page.setViewportSize({ width: 1440, height: 900 });
		await signInAsStaff(buyer.email, buyer.password!);
		await page.goto(`${appUrl()}/buyer/events/${event.id}/award`);
		await page
			.getByRole('button', { name: /^Run the plan / })
			.first()
			.click();
		await expect
			.poll(() => page.getByTestId('runs').textContent(), { timeout: 60_000 })
			.toContain('Done (best possible)');
		await page.getByRole('link', { name: 'Run 1', exact: true }).click();
		await page.waitForURL(/\/award\/runs\/[0-9a-f-]+$/);
		const original = page.url();
		await expectAccessible('the run page');
		await page.getByRole('link', { name: 'Change the allocation by hand' }).click();
		await page.getByRole('heading', { name: /Change run \d+ by hand/ }).waitFor();
		await expectAccessible('the adjust page, no changes');

		// Lock IT-3 to B: priced at once, 150.00 more.
		await page.getByLabel('What it does').selectOption('lock');
		await page.getByLabel('Item ref').fill('IT-3');
		await page.getByLabel('To supplier').selectOption(names.B);
		await page.getByRole('button', { name: 'Add the change' }).click();
		await expect.poll(() => page.getByTestId('adjusted-total').textContent()).toBe('3,330.00');
		// Move 20 of IT-2 from B to A: 2.00 more.
		await page.getByLabel('What it does').selectOption('move');
		await page.getByLabel('Item ref').fill('IT-2');
		await page.getByLabel('From supplier').selectOption(names.B);
		await page.getByLabel('To supplier').selectOption(names.A);
		await page.getByLabel('Quantity to move').fill('20');
		await page.getByRole('button', { name: 'Add the change' }).click();
		await expect.poll(() => page.getByTestId('adjusted-total').textContent()).toBe('3,332.00');
		expect(await page.getByTestId('adjusted-change').textContent()).toContain('+152.00');
		await expectAccessible('the adjust page with two changes');
		for (const width of [390, 1440]) {
			await page.setViewportSize({ width, height: 900 });
			expect(
				await page.evaluate(() => document.documentElement.scrollWidth <= window.innerWidth),
				`no sideways scrolling of the page at ${width} px`
			).toBe(true);
		}

		// Saving without the justifications the costly changes need is refused beside the change.
		await page.getByRole('button', { name: 'Solve the rest and save as a new run' }).click();
		await expect
			.poll(() => page.getByRole('alert').filter({ hasText: 'Change 1 costs money' }).count())
			.toBe(1);
		await page
			.getByLabel(/^Justification/)
			.nth(0)
			.fill('B holds the only approved tooling for IT-3.');
		await page
			.getByLabel(/^Justification/)
			.nth(1)
			.fill('A must keep a share of IT-2 to stay qualified.');
		await page.getByRole('button', { name: 'Solve the rest and save as a new run' }).click();
		await page.waitForURL((url) => /\/award\/runs\/[0-9a-f-]+$/.test(url.pathname) && url.href !== original);
		await page.getByTestId('adjusted-note').waitFor();
		expect(await page.getByTestId('adjusted-note').textContent()).toContain(
			'B holds the only approved tooling'
		);
		await expect
			.poll(() => page.getByRole('link', { name: 'Change the allocation by hand' }).count(), {
				timeout: 60_000
			})
			.toBe(1);
		await expectAccessible('the adjusted run');
		const adjusted = page.url();

		// Compared with the original run.
		const id = (address: string) => address.split('/').pop()!;
		await page.goto(
			`${appUrl()}/buyer/events/${event.id}/award/compare?run=${id(original)}&run=${id(adjusted)}`
		);
		await page.getByRole('heading', { name: 'Runs compared' }).waitFor();
		expect(await page.locator('main').textContent()).toContain('3,332.00');
		await expectAccessible('the adjusted run compared with the original');

		// Submitted, then the award report downloaded.
		await page.goto(adjusted);
		await page.getByText('Submit for sign-off…').click();
		await page.getByLabel('Justification').fill('Keeps approved tooling and a second source at 152.00 more.');
		await page.getByRole('button', { name: 'Yes, submit for sign-off' }).click();
		await expect
			.poll(() => page.getByRole('link', { name: 'Award report (PDF)' }).count(), { timeout: 20_000 })
			.toBe(1);
		const [download] = await Promise.all([
			page.waitForEvent('download'),
			page.getByRole('link', { name: 'Award report (PDF)' }).click()
		]);
		const bytes = await download.createReadStream().then(async (stream) => {
			const chunks: Buffer[] = [];
			for await (const chunk of stream) chunks.push(chunk as Buffer);
			return Buffer.concat(chunks);
		});
		expect(bytes.subarray(0, 5).toString('latin1')).toBe('%PDF-');
		await expectAccessible('the submitted run');
	});
});
