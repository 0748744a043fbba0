import { readFileSync, rmSync, writeFileSync } from 'node:fs';
import ExcelJS from 'exceljs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { browserHelpers, openBrowser, type OpenBrowser } from '../support/browser';
import { appUrl } from '../support/env';
import { aUser, closeTestDb, unique } from '../support/factories';
import { aSupplierOrganisationWithUser } from '../support/events';
import { latestMailTo } from '../support/mail';

let browser: OpenBrowser;
const { expectAccessible, signInAsStaff, signInBySupplierLink } = browserHelpers(() => browser);
const clockFile = () => process.env.CLOCK_OFFSET_FILE;

beforeAll(async () => {
	browser = await openBrowser();
});
afterAll(async () => {
	if (clockFile()) rmSync(clockFile()!, { force: true });
	await browser?.close();
	await closeTestDb();
});

/** Twenty items in three lots, as a buyer would prepare them in a spreadsheet and save as CSV. */
function itemCsv(): string {
	const rows = ['Ref,Description,Lot,Quantity,Unit,Baseline unit price'];
	for (let k = 1; k <= 20; k++) {
		const lot = k <= 7 ? 'L1' : k <= 14 ? 'L2' : 'L3';
		rows.push(`IT-${k},Test part ${k},${lot},${k * 10},C62,${(2 + k / 10).toFixed(2)}`);
	}
	return `${rows.join('\r\n')}\r\n`;
}

async function downloadSheet(): Promise<Buffer> {
	const { page } = browser;
	const [download] = await Promise.all([
		page.waitForEvent('download'),
		page.getByRole('link', { name: 'Download the bid sheet (.xlsx)' }).click()
	]);
	return readFileSync((await download.path())!);
}

async function fill(sheet: Buffer, edit: (prices: ExcelJS.Worksheet) => void): Promise<Buffer> {
	const workbook = new ExcelJS.Workbook();
	await workbook.xlsx.load(sheet as unknown as ArrayBuffer);
	edit(workbook.getWorksheet('Prices')!);
	return Buffer.from(await workbook.xlsx.writeBuffer());
}

describe('an event from set-up to the opening of bids, in a browser', () => {
	it('sets up, publishes, takes one good and one faulty sheet, keeps prices sealed, then opens them', async () => {
		const { page } = browser;
		const buyer = await aUser('buyer');
		const [first, second] = [await aSupplierOrganisationWithUser(), await aSupplierOrganisationWithUser()];
		const reference = unique('E2E');

		// The buyer creates the event.
		await signInAsStaff(buyer.email, buyer.password!);
		await page.getByRole('navigation', { name: 'Main' }).getByRole('link', { name: 'Events' }).click();
		await page.waitForURL('**/buyer/events');
		await expectAccessible('events list');
		await page.getByRole('link', { name: 'New event' }).click();
		await page.waitForURL('**/buyer/events/new');
		await expectAccessible('new event form');
		await page.getByLabel('Reference').fill(reference);
		await page.getByLabel('Title').fill('Fasteners for the test plant');
		await page.getByLabel('Named place').fill('Test plant, gate 2');
		const tomorrow = new Date(Date.now() + 24 * 3600_000).toISOString().slice(0, 10);
		await page.getByLabel("Bid deadline (in the event's time zone)").fill(`${tomorrow}T12:00`);
		await page.getByLabel('Price breaks (all-units)').check();
		await page.getByRole('button', { name: 'Create the draft' }).click();
		await page.waitForURL(/\/buyer\/events\/[0-9a-f-]+\/items$/);
		const eventUrl = page.url().replace(/\/items$/, '');
		const eventId = eventUrl.split('/').at(-1)!;

		// Items by import: 20 items in 3 lots.
		await page
			.getByLabel('Item file')
			.setInputFiles({ name: 'items.csv', mimeType: 'text/csv', buffer: Buffer.from(itemCsv()) });
		await page.getByRole('button', { name: 'Import' }).click();
		await expect.poll(() => page.getByRole('status').first().textContent()).toContain('Saved 20 items.');
		expect(await page.getByTestId('items-table').locator('tbody tr').count()).toBe(20);
		await expectAccessible('items page');

		// Three suppliers: two existing organisations and one new by e-mail.
		await page.getByRole('navigation', { name: 'Event' }).getByRole('link', { name: 'Suppliers' }).click();
		await page.waitForURL('**/suppliers');
		for (const supplier of [first, second]) {
			await page.getByLabel('An existing supplier').selectOption({ label: supplier.organisation.name });
			await page.getByRole('button', { name: 'Invite', exact: true }).click();
			await expect
				.poll(() => page.getByTestId('invited').textContent())
				.toContain(supplier.organisation.name);
		}
		const newcomer = `${unique('newcomer')}@example.test`;
		const newName = unique('New Supplier Ltd');
		await page.getByLabel("New supplier's organisation name").fill(newName);
		await page.getByLabel('Contact e-mail address').fill(newcomer);
		await page.getByLabel('Contact name').fill('New Contact');
		await page.getByRole('button', { name: 'Invite', exact: true }).click();
		await expect.poll(() => page.getByTestId('invited').textContent()).toContain(newName);
		expect((await latestMailTo(newcomer)).subject).toBe('You are invited to Tenderloom');
		await expectAccessible('suppliers page');

		// Publish: every invited supplier hears of it.
		await page.getByRole('navigation', { name: 'Event' }).getByRole('link', { name: 'Event' }).click();
		await page.waitForURL(eventUrl);
		await page.getByRole('button', { name: 'Publish the event' }).click();
		await expect.poll(() => page.getByTestId('event-state').textContent()).toContain('Open for bids');
		await expectAccessible('published event');
		expect((await latestMailTo(first.user.email)).subject).toContain(`Invitation to bid: ${reference}`);

		// The first supplier downloads the sheet, fills it and uploads it.
		await signInBySupplierLink(first.user.email);
		await page.goto(`${appUrl()}/supplier/events`);
		await page.getByRole('link', { name: reference }).click();
		await page.waitForURL(`**/supplier/events/${eventId}`);
		await expectAccessible('supplier event page');
		const good = await fill(await downloadSheet(), (prices) => {
			for (let r = 2; r <= 21; r++) prices.getCell(r, 6).value = 3 + r / 100;
			prices.getCell(2, 7).value = 50;
			prices.getCell(2, 8).value = 2.9;
		});
		const uploadedAfter = new Date();
		await page.getByLabel('Filled bid sheet (.xlsx or .csv, up to 5 MB)').setInputFiles({
			name: 'our-prices.xlsx',
			mimeType: 'application/vnd.openxmlformats-officedocument.spreadsheetml.sheet',
			buffer: good
		});
		await page.getByRole('button', { name: 'Upload' }).click();
		await expect
			.poll(() => page.getByTestId('upload-accepted').textContent(), { timeout: 20_000 })
			.toContain('Accepted as revision 1');
		await expect.poll(() => page.getByTestId('current-bid').textContent()).toContain('20 items priced');
		const receipt = await latestMailTo(first.user.email, { after: uploadedAfter, timeoutMs: 15_000 });
		expect(receipt.subject).toBe(`Bid received: ${reference} revision 1`);
		expect(receipt.text).toMatch(/SHA-256 [0-9a-f]{64}/);
		await expectAccessible('supplier event page after the upload');

		// The second supplier uploads a sheet with five planted errors and sees all five with their places.
		await signInBySupplierLink(second.user.email);
		await page.goto(`${appUrl()}/supplier/events/${eventId}`);
		const faulty = await fill(await downloadSheet(), (prices) => {
			for (let r = 2; r <= 21; r++) prices.getCell(r, 6).value = 4;
			prices.getCell(2, 6).value = 'about four'; // text in a price cell
			prices.getCell(3, 6).value = -1; // a negative price
			prices.getCell(4, 7).value = 30; // a break with a quantity but no price
			prices.getCell(5, 7).value = 20; // a break whose price does not fall
			prices.getCell(5, 8).value = 4.5;
			prices.getCell(6, 1).value = 'IT-99'; // an item ref that is not in the event
		});
		await page.getByLabel('Filled bid sheet (.xlsx or .csv, up to 5 MB)').setInputFiles({
			name: 'faulty.xlsx',
			mimeType: 'application/vnd.openxmlformats-officedocument.spreadsheetml.sheet',
			buffer: faulty
		});
		await page.getByRole('button', { name: 'Upload' }).click();
		await expect.poll(() => page.getByTestId('problem').count(), { timeout: 20_000 }).toBe(5);
		const problems = await page.getByTestId('problem').allTextContents();
		expect(problems).toEqual([
			'Prices, row 2, column F: "about four" is not a number',
			'Prices, row 3, column F: must not be negative',
			'Prices, row 4, column H: break 1 needs both a from quantity and a unit price',
			'Prices, row 5, column H: must be less than 4 (prices fall from break to break)',
			'Prices, row 6, column A: "IT-99" is not an item of this event'
		]);
		expect(await page.getByTestId('current-bid').textContent()).toContain('No bid yet');
		await expectAccessible('supplier event page with problems');

		// Before the deadline: the buyer sees who submitted and when, but no price; the API says 403.
		await signInAsStaff(buyer.email, buyer.password!);
		await page.goto(`${eventUrl}/bids`);
		const invited = page.getByTestId('invited-bid-status');
		expect(await invited.getByRole('row', { name: first.organisation.name }).textContent()).toContain(
			'Bid in'
		);
		expect(await invited.getByRole('row', { name: second.organisation.name }).textContent()).toContain(
			'No bid yet'
		);
		expect(await page.getByTestId('sealed-note').isVisible()).toBe(true);
		expect(await page.locator('main').textContent()).not.toContain('3.02');
		expect((await page.request.get(`${appUrl()}/api/events/${eventId}/bids`)).status()).toBe(403);
		await expectAccessible('bids page, sealed');
		// The reminder goes to the two invited suppliers without a bid; its answer shows beside the button.
		await page.getByRole('button', { name: 'Remind the 2 suppliers who have not bid' }).click();
		await expect
			.poll(() => page.getByRole('status').filter({ hasText: 'Reminder sent' }).textContent())
			.toContain('at the 2 suppliers that have not bid');
		await expectAccessible('bids page, reminder sent');

		// After the deadline (the server's clock moved two days on): the prices open to the buyer.
		writeFileSync(clockFile()!, JSON.stringify({ offsetMs: 2 * 24 * 3600_000 }));
		try {
			await page.reload();
			await expect.poll(() => page.getByTestId('event-state').textContent()).toContain('Closed, bids opened');
			const opened = await page.getByTestId('opened-prices').textContent();
			expect(opened).toContain(first.organisation.name);
			expect(opened).toContain('3.02');
			expect(opened).toContain('from 50: 2.90');
			expect(await page.getByTestId('opened-prices').locator('[data-lowest]').count()).toBeGreaterThan(0);
			expect((await page.request.get(`${appUrl()}/api/events/${eventId}/bids`)).status()).toBe(200);
			await expectAccessible('bids page, opened');
			// On a phone the tables scroll in their own boxes, never the page (their hidden "no bid" labels too).
			await page.setViewportSize({ width: 390, height: 844 });
			await page.reload();
			await page.getByTestId('opened-prices').waitFor();
			expect(await page.evaluate(() => document.documentElement.scrollWidth <= window.innerWidth)).toBe(true);
			await expectAccessible('bids page, opened, 390 px');
			await page.setViewportSize({ width: 1440, height: 900 });
		} finally {
			rmSync(clockFile()!, { force: true });
		}
	});
});
