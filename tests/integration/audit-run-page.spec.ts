import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { formatMoney } from '../../src/lib/format';
import type { Browserless } from '../support/http';
import { anOrganisation, closeTestDb, testDb, unique, type TestUser } from '../support/factories';
import {
	aSignedInUser,
	aSupplierOrganisationWithUser,
	anOpenEvent,
	fillSheet,
	signedIn,
	untilPast,
	uploadSheet,
	type TestEvent
} from '../support/events';
import { finished, post } from '../support/runs';
import { hrefsOf, textOf } from '../support/html';

afterAll(closeTestDb);

const json = async (response: Response) => (await response.json()) as Record<string, unknown>;

type Staff = { user: TestUser; client: Browserless };
let buyer: Staff;
let approver: Staff;
let auditor: Staff;
let strangerAuditor: Staff;
let event: TestEvent;
let lowestRun: { id: string; totalCost: number };
let approvedRun: { id: string; totalCost: number };
const justification = 'Two suppliers on every item keep supply safe.';
const comment = 'Agreed: the dual sourcing is worth its cost.';

// Auditors had no page for a run: their home linked each run to its workbook only.
beforeAll(async () => {
	const organisation = await anOrganisation('buyer');
	const other = await anOrganisation('buyer');
	const staff = { organisationId: organisation.id };
	[buyer, approver, auditor, strangerAuditor] = await Promise.all([
		aSignedInUser('buyer', staff),
		aSignedInUser('approver', staff),
		aSignedInUser('auditor', staff),
		aSignedInUser('auditor', { organisationId: other.id })
	]);
	approver.user.name = unique('Approver');
	await testDb()('users').where({ id: approver.user.id }).update({ name: approver.user.name });
	const bidders = await Promise.all([aSupplierOrganisationWithUser(), aSupplierOrganisationWithUser()]);
	const deadline = new Date(Date.now() + 8_000);
	event = await anOpenEvent({
		createdBy: buyer.user.id,
		invite: bidders.map((b) => b.organisation.id),
		deadline,
		organisationId: organisation.id
	});
	for (const [k, bidder] of bidders.entries()) {
		const client = await signedIn(bidder.user);
		const sheet = Buffer.from(await (await client.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer());
		const filled = await fillSheet(sheet, { 'IT-1': [4 + k], 'IT-2': [5 - k], 'IT-3': [6] });
		expect((await uploadSheet(client, event.id, filled)).status).toBe(201);
	}
	await untilPast(deadline);

	const plans = (await json(await buyer.client.get(`/api/events/${event.id}/plans`, 'application/json')))
		.plans as { id: string; lowestCost: boolean }[];
	const dual = (
		await json(
			await post(buyer.client, `/api/events/${event.id}/plans`, {
				name: 'Dual sourcing',
				rules: [{ type: 'max_share', scope: 'each_item', who: 'each_supplier', percent: 60 }]
			})
		)
	).plan as { id: string };
	const run = async (planId: string) => {
		const started = await json(await post(buyer.client, `/api/plans/${planId}/runs`, {}));
		const done = (await finished(buyer.client, started.runId as string, 50_000)) as {
			id: string;
			result: { totalCost: number };
		};
		return { id: done.id, totalCost: done.result.totalCost };
	};
	lowestRun = await run(plans.find((p) => p.lowestCost)!.id);
	approvedRun = await run(dual.id);
	expect((await post(buyer.client, `/api/runs/${approvedRun.id}/submit`, { justification })).status).toBe(
		200
	);
	const decided = await post(approver.client, `/api/runs/${approvedRun.id}/decision`, {
		decision: 'approve',
		comment
	});
	expect(decided.status).toBe(200);
}, 120_000);

describe('the auditor’s run page', () => {
	it('shows an approved run read-only with its total, plan, sign-off and files', async () => {
		const response = await auditor.client.get(`/audit/runs/${approvedRun.id}`);
		expect(response.status).toBe(200);
		const html = await response.text();
		const page = textOf(html);
		expect(page).toContain(`Run 2 · ${event.reference}`);
		expect(page).toContain('Awarded');
		expect(page).toContain('Run 2 · Dual sourcing');
		expect(page).toContain(`Total cost ${formatMoney(approvedRun.totalCost, 'EUR')} EUR`);

		const signoff = page.slice(page.indexOf('Sign-off'));
		expect(signoff).toContain(`Submitted by ${buyer.user.name}`);
		expect(signoff).toContain(`Justification ${justification}`);
		expect(signoff).toContain(`Approved by ${approver.user.name}`);
		expect(signoff).toContain(`Comment ${comment}`);
		const { bound_hash } = await testDb()('signoffs').where({ run_id: approvedRun.id }).first('bound_hash');
		expect(html).toContain(`title="${String(bound_hash).trim()}"`);

		expect(hrefsOf(html)).toEqual(
			expect.arrayContaining([
				`/events/${event.id}/trail`,
				`/api/runs/${approvedRun.id}/export`,
				`/api/runs/${approvedRun.id}/report?format=pdf`,
				`/api/runs/${approvedRun.id}/report?format=xlsx`
			])
		);
		expect(html).not.toMatch(/<form|<textarea/);
	});

	it('shows a run never submitted without a sign-off or an award report', async () => {
		const html = await (await auditor.client.get(`/audit/runs/${lowestRun.id}`)).text();
		const page = textOf(html);
		expect(page).toContain('Lowest cost (no rules)');
		expect(page).toContain(`Total cost ${formatMoney(lowestRun.totalCost, 'EUR')} EUR`);
		expect(page).toContain('This run was never submitted for sign-off.');
		const links = hrefsOf(html);
		expect(links).toContain(`/api/runs/${lowestRun.id}/export`);
		expect(links.some((href) => href.includes('/report'))).toBe(false);
	});

	it('opens every link it gives the auditor, and the allocation’s pages', async () => {
		const html = await (await auditor.client.get(`/audit/runs/${approvedRun.id}`)).text();
		const links = hrefsOf(html).filter((href) => href.startsWith('/events/') || href.startsWith('/api/'));
		expect(links.length).toBe(4);
		for (const href of links) expect([href, (await auditor.client.get(href)).status]).toEqual([href, 200]);
		const lines = await auditor.client.get(
			`/api/runs/${approvedRun.id}/lines?offset=0&limit=2`,
			'application/json'
		);
		expect(lines.status).toBe(200);
		expect(((await json(lines)).lines as unknown[]).length).toBe(2);
	});

	it('is not found by an auditor of another organisation, nor its allocation', async () => {
		const page = await strangerAuditor.client.get(`/audit/runs/${approvedRun.id}`);
		expect([403, 404]).toContain(page.status);
		expect(await page.text()).not.toContain(event.reference);
		const lines = await strangerAuditor.client.get(`/api/runs/${approvedRun.id}/lines`, 'application/json');
		expect([403, 404]).toContain(lines.status);
	});

	it('is in the auditor’s area only: buyers and approvers are refused', async () => {
		for (const { client } of [buyer, approver])
			expect((await client.get(`/audit/runs/${approvedRun.id}`)).status).toBe(403);
	});

	it('refuses a POST from the auditor in the hook', async () => {
		const response = await auditor.client.postForm(`/audit/runs/${approvedRun.id}`, { decision: 'return' });
		expect(response.status).toBe(403);
		expect(await response.text()).toContain('Auditors can read but not change anything.');
	});

	it('is linked from each run on the auditor’s home, beside the run’s workbook', async () => {
		const links = hrefsOf(await (await auditor.client.get('/audit')).text());
		expect(links).toEqual(
			expect.arrayContaining([
				`/audit/runs/${lowestRun.id}`,
				`/api/runs/${lowestRun.id}/export`,
				`/audit/runs/${approvedRun.id}`,
				`/api/runs/${approvedRun.id}/export`
			])
		);
	});
});
