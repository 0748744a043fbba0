// The compare page in Chromium at a desktop's and a phone's width: the page itself never scrolls sideways
// (its tables scroll in their own boxes), axe finds nothing, and its controls work from the keyboard.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { browserHelpers, openBrowser, type OpenBrowser } from '../support/browser';
import { twoComparedRuns } from '../support/compared-runs';
import { appUrl } from '../support/env';
import { anOpenEvent } from '../support/events';
import { aUser, closeTestDb } from '../support/factories';

let browser: OpenBrowser;
const { expectAccessible, signInAsStaff } = browserHelpers(() => browser);

beforeAll(async () => {
	browser = await openBrowser();
});
afterAll(async () => {
	await browser?.close();
	await closeTestDb();
});

describe('runs compared, in a browser', () => {
	it('fits 1440 and 390 px, passes axe and works from the keyboard', async () => {
		const { page } = browser;
		const buyer = await aUser('buyer');
		const event = await anOpenEvent({ createdBy: buyer.id, invite: [] });
		const [first, second] = await twoComparedRuns(event.id, buyer.id);
		await signInAsStaff(buyer.email, buyer.password!);
		const address = `${appUrl()}/buyer/events/${event.id}/award/compare?run=${first}&run=${second}`;
		for (const width of [1440, 390]) {
			await page.setViewportSize({ width, height: 900 });
			await page.goto(address);
			await page.getByRole('heading', { name: 'Runs compared' }).waitFor();
			expect(
				await page.evaluate(() => document.documentElement.scrollWidth <= window.innerWidth),
				`no sideways scrolling of the page at ${width} px`
			).toBe(true);
			expect(await page.getByRole('img', { name: /Spend by supplier in runs 1 and 2/ }).count()).toBe(1);
			await expectAccessible(`the compare page at ${width} px`);
		}

		// From the reference run's choice, Tab reaches "Show" with a visible focus ring, and Enter sends it.
		await page.getByLabel('Differences against').focus();
		await page.keyboard.press('Tab');
		const focused = await page.evaluate(() => {
			const element = document.activeElement as HTMLElement;
			return { text: element.textContent?.trim(), outline: getComputedStyle(element).outlineStyle };
		});
		expect(focused).toEqual({ text: 'Show', outline: 'solid' });
		await page.keyboard.press('Enter');
		await page.waitForURL(/[?&]ref=/);

		// Choosing one run only, by keyboard: the page says so and offers the runs again.
		await page.locator('summary', { hasText: 'Choose other runs' }).focus();
		await page.keyboard.press('Enter');
		await page
			.getByRole('checkbox', { name: /^Run 2 ·/ })
			.first()
			.focus();
		await page.keyboard.press('Space');
		await page.getByRole('button', { name: 'Compare the chosen runs' }).first().focus();
		await page.keyboard.press('Enter');
		await page.getByTestId('compare-message').waitFor();
		expect(await page.getByTestId('compare-message').innerText()).toContain('One run was chosen');
		await expectAccessible('the compare page asking for runs');
	});
});
