// After an action, the keyboard focus is never left on the page's <body> (issue: it fell there after
// removing a rule, saving a plan, when the upload button turned disabled, and after every successful form
// action, which SvelteKit follows with a focus reset). Each action is done with the keyboard where a person
// would, then the focus is read. WCAG 2.2 SC 2.4.3 (focus order) is the standard; "never on body" is the
// project's own bar for it.
import type { Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { browserHelpers, openBrowser, type OpenBrowser } from '../support/browser';
import { appUrl } from '../support/env';
import type { Browserless } from '../support/http';
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
import { finished, post } from '../support/runs';

let browser: OpenBrowser;
const { signInAsStaff, signInBySupplierLink } = browserHelpers(() => browser);
let buyer: TestUser;
let approver: TestUser;
let supplier: TestUser;
let event: TestEvent;
let openEvent: TestEvent;
let sheet: Buffer;
const runs: string[] = [];

const json = async (response: Response) => (await response.json()) as Record<string, unknown>;

beforeAll(async () => {
	browser = await openBrowser();
	[buyer, approver] = await Promise.all([aUser('buyer'), aUser('approver')]);
	const bidders = await Promise.all([aSupplierOrganisationWithUser(), aSupplierOrganisationWithUser()]);
	supplier = bidders[0].user;
	// Room for two browser files setting up side by side: every bid must be in before the deadline.
	const deadline = new Date(Date.now() + 20_000);
	event = await anOpenEvent({ createdBy: buyer.id, invite: bidders.map((b) => b.organisation.id), deadline });
	openEvent = await anOpenEvent({ createdBy: buyer.id, invite: [bidders[0].organisation.id] });
	// One signed-in client per supplier, kept for the set-up below.
	const clients: Browserless[] = [];
	for (const [k, prices] of [
		[0, [4, 5, 6]],
		[1, [4.2, 4.9, 6.5]]
	] as const) {
		const client = (clients[k] = await signedIn(bidders[k].user));
		const blank = Buffer.from(await (await client.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer());
		const filled = await fillSheet(blank, { 'IT-1': [prices[0]], 'IT-2': [prices[1]], 'IT-3': [prices[2]] });
		expect((await uploadSheet(client, event.id, filled)).status).toBe(201);
	}
	const client = clients[0]!;
	const blankSheet = await client.get(`/api/events/${openEvent.id}/bid-sheet`);
	expect(blankSheet.status, await blankSheet.clone().text()).toBe(200);
	const blank = Buffer.from(await blankSheet.arrayBuffer());
	sheet = await fillSheet(blank, { 'IT-1': [3], 'IT-2': [4], 'IT-3': [5] });
	await untilPast(deadline);
	const api = await signedIn(buyer);
	const plans = (await json(await api.get(`/api/events/${event.id}/plans`, 'application/json'))).plans as {
		id: string;
		lowestCost: boolean;
	}[];
	const started = await json(await post(api, `/api/plans/${plans.find((p) => p.lowestCost)!.id}/runs`, {}));
	runs.push(String((await finished(api, started.runId as string)).id));
}, 120_000);

afterAll(async () => {
	await browser?.close();
	await closeTestDb();
});

/** Where the focus is once the page has settled: null when on <body> (or nowhere). */
async function focusAfter(page: Page): Promise<string | null> {
	await page.waitForLoadState('networkidle', { timeout: 10_000 }).catch(() => undefined);
	await page.waitForTimeout(300);
	return page.evaluate(() => {
		const element = document.activeElement;
		if (!element || element === document.body) return null;
		return `${element.tagName.toLowerCase()} “${(element.textContent ?? '').trim().slice(0, 40)}”`;
	});
}

/** Focuses a control as a keyboard user would reach it and presses Enter on it. */
async function press(page: Page, locator: ReturnType<Page['locator']>) {
	await locator.focus();
	await page.keyboard.press('Enter');
}

describe('the focus after an action', () => {
	it('stays on the page for the buyer: a rule removed, a plan saved, a run submitted for sign-off', async () => {
		const { page } = browser;
		await signInAsStaff(buyer.email, buyer.password!);
		await page.goto(`${appUrl()}/buyer/events/${event.id}/award`);
		await page.waitForLoadState('networkidle');

		await press(page, page.getByRole('button', { name: 'Add the rule' }));
		await press(page, page.getByRole('button', { name: 'Remove rule 1' }));
		expect(await focusAfter(page), 'after removing a rule').not.toBeNull();

		await press(page, page.getByRole('button', { name: 'Add the rule' }));
		await page.getByLabel('Plan name').fill('Focus check');
		await press(page, page.getByRole('button', { name: 'Save the plan' }));
		await page.getByRole('status').filter({ hasText: /saved/i }).waitFor();
		expect(await focusAfter(page), 'after saving a plan').not.toBeNull();

		// A run started from its plan: the answer sits under that plan and follows the run until it is done
		// (it said "queued" for good before).
		await press(page, page.getByRole('button', { name: /^Run the plan Lowest cost/ }));
		const plans = page.getByTestId('plans');
		await expect
			.poll(() => plans.getByRole('status').textContent(), { timeout: 60_000 })
			.toMatch(/Run 2: done \(/);
		expect(await focusAfter(page), 'after starting a run').not.toBeNull();

		await page.goto(`${appUrl()}/buyer/events/${event.id}/award/runs/${runs[0]}`);
		await press(page, page.getByText('Submit for sign-off…'));
		await page.getByLabel('Justification').fill('The lowest total; every item has two bids.');
		await press(page, page.getByRole('button', { name: 'Yes, submit for sign-off' }));
		await page
			.getByText(/submitted/i)
			.first()
			.waitFor();
		expect(await focusAfter(page), 'after submitting for sign-off').not.toBeNull();
	});

	it('stays on the page for the approver: approve', async () => {
		const { page } = browser;
		await signInAsStaff(approver.email, approver.password!);
		await page.goto(`${appUrl()}/approver/runs/${runs[0]}`);
		await press(page, page.getByText('Approve the award…'));
		await press(page, page.getByRole('button', { name: 'Yes, approve and send the notices' }));
		await page
			.getByText(/approved/i)
			.first()
			.waitFor();
		expect(await focusAfter(page), 'after approving').not.toBeNull();
	});

	it('stays on the page for the supplier: an upload (its button turns disabled) and a withdrawal', async () => {
		const { page } = browser;
		await signInBySupplierLink(supplier.email);
		await page.goto(`${appUrl()}/supplier/events/${openEvent.id}`);
		await page.waitForLoadState('networkidle');
		// A refused on-screen price: the focus goes to the list of problems (above the table, far from the
		// button), which names the item and the column, and the cell is marked invalid.
		const cell = page.getByRole('textbox', { name: /IT-1$/ }).first();
		await cell.fill('12,07');
		await press(page, page.getByRole('button', { name: 'Save the prices as a new revision' }));
		const problems = page.getByTestId('problems');
		await problems.waitFor();
		expect(await page.evaluate(() => document.activeElement?.getAttribute('data-testid'))).toBe('problems');
		expect(await problems.textContent()).toContain(
			'IT-1 Test item 1, Unit price (EUR): "12,07" is not a number: write the decimal mark as a point (12.07)'
		);
		expect(await cell.getAttribute('aria-invalid')).toBe('true');
		await cell.fill('');

		await page.locator('input[type="file"]').setInputFiles({
			name: 'bid.xlsx',
			mimeType: 'application/vnd.openxmlformats-officedocument.spreadsheetml.sheet',
			buffer: sheet
		});
		await press(page, page.getByRole('button', { name: 'Upload', exact: true }));
		await page
			.getByText(/revision 1/i)
			.first()
			.waitFor();
		expect(await focusAfter(page), 'after uploading').not.toBeNull();

		await press(page, page.getByText('Withdraw the bid…'));
		await press(page, page.getByRole('button', { name: 'Yes, withdraw the bid' }));
		await page
			.getByText(/withdrew|withdrawn/i)
			.first()
			.waitFor();
		expect(await focusAfter(page), 'after withdrawing').not.toBeNull();
	});
});
