// The approver's, the auditor's, the administrator's and the supplier's pages at 1440 px and 390 px: no
// sideways scrolling, a visible focus on every Tab stop, nothing axe finds (tests/support/page-walk.ts).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { browserHelpers, openBrowser, type OpenBrowser } from '../support/browser';
import { closeTestDb } from '../support/factories';
import { anEventToWalk, walk, type WalkedEvent } from '../support/page-walk';

let browser: OpenBrowser;
let walked: WalkedEvent;
const { signInAsStaff, signInBySupplierLink } = browserHelpers(() => browser);

beforeAll(async () => {
	browser = await openBrowser();
	walked = await anEventToWalk();
}, 120_000);

afterAll(async () => {
	await browser?.close();
	await closeTestDb();
});

describe('every page of the approver, the auditor, the administrator and a supplier, at 1440 px and 390 px', () => {
	it('the approver’s, the auditor’s and the administrator’s pages', async () => {
		const problems: string[] = [];
		await signInAsStaff(walked.staff.approver.email, walked.staff.approver.password!);
		problems.push(
			...(await walk(browser, 'approver', [
				['home', '/approver'],
				['sign-off', `/approver/runs/${walked.runs[1]}`],
				['trail', `/events/${walked.event.id}/trail`]
			]))
		);
		await signInAsStaff(walked.staff.auditor.email, walked.staff.auditor.password!);
		problems.push(
			...(await walk(browser, 'auditor', [
				['home', '/audit'],
				['run', `/audit/runs/${walked.runs[1]}`],
				['trail', `/events/${walked.event.id}/trail`]
			]))
		);
		await signInAsStaff(walked.staff.admin.email, walked.staff.admin.password!);
		problems.push(
			...(await walk(browser, 'admin', [
				['home', '/admin'],
				['users', '/admin/users']
			]))
		);
		expect(problems).toEqual([]);
	});

	it('the supplier’s pages', async () => {
		await signInBySupplierLink(walked.supplier.email);
		const problems = await walk(browser, 'supplier', [
			['home', '/supplier'],
			['events', '/supplier/events'],
			['opened-event', `/supplier/events/${walked.event.id}`],
			['explanations', `/supplier/events/${walked.event.id}/explanations`],
			['open-event', `/supplier/events/${walked.openEvent.id}`]
		]);
		expect(problems).toEqual([]);
	});
});
