import { readFileSync, rmSync, writeFileSync } from 'node:fs';
import ExcelJS from 'exceljs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { browserHelpers, openBrowser, type OpenBrowser } from '../support/browser';
import { appUrl } from '../support/env';
import { aUser, closeTestDb } from '../support/factories';
import {
	aSupplierOrganisationWithUser,
	anOpenEvent,
	fillSheet,
	signedIn,
	uploadSheet
} from '../support/events';
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

describe('the four journeys, in a browser', () => {
	it('a supplier bids, a buyer optimises with a rule, an approver signs off, the supplier hears its award', async () => {
		const { page } = browser;
		const buyer = await aUser('buyer');
		const approver = await aUser('approver');
		const [first, second] = [await aSupplierOrganisationWithUser(), await aSupplierOrganisationWithUser()];
		const event = await anOpenEvent({
			createdBy: buyer.id,
			invite: [first.organisation.id, second.organisation.id],
			deadline: new Date(Date.now() + 24 * 3600_000)
		});

		// 1. The supplier uploads its bid in the browser; a competitor has bid by the API.
		const rival = await signedIn(second.user);
		const rivalSheet = Buffer.from(
			await (await rival.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer()
		);
		expect(
			(
				await uploadSheet(
					rival,
					event.id,
					await fillSheet(rivalSheet, { 'IT-1': [5], 'IT-2': [4], 'IT-3': [9] })
				)
			).status
		).toBe(201);
		await signInBySupplierLink(first.user.email);
		await page.goto(`${appUrl()}/supplier/events/${event.id}`);
		const [download] = await Promise.all([
			page.waitForEvent('download'),
			page.getByRole('link', { name: 'Download the bid sheet (.xlsx)' }).click()
		]);
		const workbook = new ExcelJS.Workbook();
		await workbook.xlsx.load(readFileSync((await download.path())!) as unknown as ArrayBuffer);
		const prices = workbook.getWorksheet('Prices')!;
		[4, 4.5, 8].forEach((price, k) => (prices.getCell(k + 2, 6).value = price));
		await page.getByLabel('Filled bid sheet (.xlsx or .csv, up to 5 MB)').setInputFiles({
			name: 'bid.xlsx',
			mimeType: 'application/vnd.openxmlformats-officedocument.spreadsheetml.sheet',
			buffer: Buffer.from(await workbook.xlsx.writeBuffer())
		});
		await page.getByRole('button', { name: 'Upload' }).click();
		await expect
			.poll(() => page.getByTestId('upload-accepted').textContent(), { timeout: 20_000 })
			.toContain('revision 1');

		// The deadline passes: the server's clock moves two days on for the rest of the journey (a published
		// deadline can only move later, even in SQL). The event counts as closed at its first read.
		writeFileSync(clockFile()!, JSON.stringify({ offsetMs: 2 * 24 * 3600_000 }));

		// 2. The buyer builds a plan with a share cap, runs it and reads the allocation.
		await signInAsStaff(buyer.email, buyer.password!, '/buyer');
		await page.goto(`${appUrl()}/buyer/events/${event.id}/award`);
		await expectAccessible('award page');
		await page.getByLabel('Rule', { exact: true }).selectOption('max_share');
		await page.getByLabel('Percent').fill('70');
		expect(await page.getByTestId('rule-preview').textContent()).toBe(
			'No supplier gets more than 70% of any item'
		);
		await page.getByRole('button', { name: 'Add the rule' }).click();
		await page.getByLabel('Plan name').fill('Dual sourcing');
		await page.getByRole('button', { name: 'Save the plan' }).click();
		await expect.poll(() => page.getByTestId('plans').textContent()).toContain('Dual sourcing');
		await page.getByRole('button', { name: 'Run the plan Dual sourcing' }).click();
		await expect
			.poll(() => page.getByTestId('runs').textContent(), { timeout: 30_000 })
			.toContain('Done (best possible)');
		await page.getByRole('link', { name: 'Run 1', exact: true }).click();
		await page.waitForURL(/\/award\/runs\//);
		await expect.poll(() => page.getByTestId('allocation').textContent()).toContain(first.organisation.name);
		// IT-1 (100 units): the first supplier at 4 is capped at 70; the rival gets 30.
		const rows = await page.getByTestId('allocation').locator('tbody tr').allTextContents();
		expect(
			rows.some((r) => r.includes('IT-1') && r.includes(first.organisation.name) && r.includes('70'))
		).toBe(true);
		expect(await page.getByTestId('rule-costs').textContent()).toContain(
			'No supplier gets more than 70% of any item'
		);
		await expectAccessible('run page');
		await page.getByText('Submit for sign-off…').click();
		await page
			.getByLabel('Justification', { exact: true })
			.fill('Dual sourcing at 70% keeps a second supplier on every item.');
		await page.getByRole('button', { name: 'Yes, submit for sign-off' }).click();
		// The result sits beside the sign-off form that caused it (a status, read out), not at the page's top.
		await expect
			.poll(() => page.getByRole('region', { name: 'Sign-off' }).getByRole('status').textContent())
			.toContain('Submitted for sign-off');
		await expect.poll(() => page.getByRole('link', { name: 'Award report (PDF)' }).count()).toBe(1);

		// 3. The approver signs it off.
		await signInAsStaff(approver.email, approver.password!, '/approver');
		// Its own event's submission: other browser tests submit runs of the same buying organisation.
		await page
			.getByTestId('pending-signoffs')
			.getByRole('link', { name: new RegExp(`^${event.reference} `) })
			.click();
		await page.waitForURL(/\/approver\/runs\//);
		await expectAccessible('sign-off page');
		expect(await page.getByTestId('submit-justification').textContent()).toBe(
			'Dual sourcing at 70% keeps a second supplier on every item.'
		);
		const notifiedAfter = new Date();
		await page.getByLabel('Comment (required to return)').fill('Within budget.');
		await page.getByText('Approve the award…').click();
		await page.getByRole('button', { name: 'Yes, approve and send the notices' }).click();
		await page.waitForURL('**/approver');

		// 4. The supplier gets its award e-mail with its own quantities, and sees the same in its portal.
		const notice = await latestMailTo(first.user.email, { after: notifiedAfter, timeoutMs: 30_000 });
		expect(notice.subject).toMatch(/^Award notice/);
		expect(notice.text).toContain('IT-1: 70 at 4.00 EUR = 280.00 EUR');
		expect(notice.text).not.toContain(second.organisation.name);
		await signInBySupplierLink(first.user.email);
		await page.goto(`${appUrl()}/supplier/events/${event.id}`);
		expect(await page.getByTestId('my-result').textContent()).toContain('intends to award you');
		const mine = await page.getByTestId('my-result-lines').locator('tbody tr').allTextContents();
		expect(mine.find((r) => r.includes('IT-1'))).toContain('70');
		await expectAccessible('supplier result');
	});
});
