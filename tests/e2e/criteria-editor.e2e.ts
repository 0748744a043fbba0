// The draft's criteria editor in Chromium, as a buyer meets it the first time: at a phone's width the page
// does not scroll sideways and axe finds nothing; a criterion typed in and saved comes back on a reload
// with an empty row for the next; a rate that is not a number is refused on its own cell (marked
// invalid and named in the message) while the stored criterion stays as it was.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { browserHelpers, openBrowser, type OpenBrowser } from '../support/browser';
import { appUrl } from '../support/env';
import { anOpenEvent } from '../support/events';
import { aUser, closeTestDb, testDb } from '../support/factories';

let browser: OpenBrowser;
const { expectAccessible, signInAsStaff } = browserHelpers(() => browser);

beforeAll(async () => {
	browser = await openBrowser();
});
afterAll(async () => {
	await browser?.close();
	await closeTestDb();
});

describe('the criteria editor of a draft, in a browser', () => {
	it('saves a criterion, shows it again, and refuses a bad rate on its cell without losing it', async () => {
		const { page } = browser;
		const buyer = await aUser('buyer');
		const event = await anOpenEvent({ createdBy: buyer.id, invite: [], state: 'draft' });
		await signInAsStaff(buyer.email, buyer.password!);
		const address = `${appUrl()}/buyer/events/${event.id}/criteria`;

		await page.setViewportSize({ width: 390, height: 900 });
		await page.goto(address);
		await page.getByRole('heading', { name: 'Non-price criteria' }).waitFor();
		expect(
			await page.evaluate(() => document.documentElement.scrollWidth <= window.innerWidth),
			'no sideways scrolling of the page at 390 px'
		).toBe(true);
		await expectAccessible('the draft criteria editor at 390 px');

		// Lead time: each day above 5 adds 0.2 % of the unit price (the example the product's issue gives).
		await page.setViewportSize({ width: 1440, height: 900 });
		await page.getByLabel('Ref 1', { exact: true }).fill('LT');
		await page.getByLabel('Name 1', { exact: true }).fill('Lead time');
		await page.getByLabel('Point 1', { exact: true }).fill('days');
		await page.getByLabel('Answered by 1', { exact: true }).selectOption('supplier');
		await page.getByLabel('Money 1', { exact: true }).selectOption('percent_of_price');
		await page.getByLabel('Per point 1', { exact: true }).fill('0.2');
		await page.getByLabel('Threshold 1', { exact: true }).fill('5');
		await page.getByLabel('Costly side 1', { exact: true }).selectOption('above');
		await page.getByRole('button', { name: 'Save the criteria' }).click();
		await page.getByRole('status').filter({ hasText: 'Saved 1 criterion.' }).waitFor();

		await page.reload();
		expect(await page.getByLabel('Ref 1', { exact: true }).inputValue()).toBe('LT');
		expect(await page.getByLabel('Per point 1', { exact: true }).inputValue()).toBe('0.2');
		expect(await page.getByLabel('Ref 2', { exact: true }).inputValue()).toBe('');

		await page.getByLabel('Per point 1', { exact: true }).fill('two');
		await page.getByRole('button', { name: 'Save the criteria' }).click();
		// The message above the table names the row; the cell's own message sits under it, tied to it.
		await page.locator('p.message-error[role="alert"]').filter({ hasText: 'Criterion 1:' }).waitFor();
		const rate = page.getByLabel('Per point 1', { exact: true });
		expect(await rate.getAttribute('aria-invalid')).toBe('true');
		const describedBy = await rate.getAttribute('aria-describedby');
		expect(describedBy).toBe('criterion-0-rate-error');
		expect(await page.locator(`#${describedBy}`).textContent()).toContain('must be a number');
		// What the buyer typed stays in the cell to correct; what is stored is the criterion saved before.
		expect(await rate.inputValue()).toBe('two');
		const stored = await testDb()('evaluation_criteria').where({ event_id: event.id });
		expect(stored.map((c: { ref: string; rate: string }) => [c.ref, Number(c.rate)])).toEqual([['LT', 0.2]]);
		await expectAccessible('the criteria editor with a refused rate');
	}, 90_000);
});
