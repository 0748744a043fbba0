import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { formatMoney } from '../../src/lib/format';
import type { Browserless } from '../support/http';
import {
	anOrganisation,
	closeTestDb,
	testDb,
	theBuyingOrganisation,
	unique,
	type TestUser
} from '../support/factories';
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
/** Past its deadline, with two bids, two runs and the second approved. */
let closed: TestEvent;
/** Still open for bids, with the same two bids sealed. */
let sealed: TestEvent;
/** Another buying organisation's event, past its deadline too. */
let elsewhere: TestEvent;
let lowestRun: { id: string; totalCost: number };
let approvedRun: { id: string; totalCost: number };
const justification = 'Two suppliers on every item keep supply safe.';
const comment = 'Agreed: the dual sourcing is worth its cost.';

// The auditor's home listed every event with a link to its trail and nothing else: not the opening, the
// runs, the sign-off or the files an auditor reads; and auditors had no page for a run. One organisation
// of its own keeps both pages to this file; one fixture serves both (a deadline to wait out, two runs).
beforeAll(async () => {
	// The tests' shared buying organisation is the oldest: made first, it is never this test's own.
	const shared = await theBuyingOrganisation();
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
	const invite = bidders.map((b) => b.organisation.id);
	const deadline = new Date(Date.now() + 10_000);
	[closed, sealed, elsewhere] = await Promise.all([
		anOpenEvent({ createdBy: buyer.user.id, invite, deadline, organisationId: organisation.id }),
		anOpenEvent({ createdBy: buyer.user.id, invite, organisationId: organisation.id }),
		anOpenEvent({ createdBy: buyer.user.id, invite, deadline, organisationId: shared.id })
	]);
	for (const [k, bidder] of bidders.entries()) {
		const client = await signedIn(bidder.user);
		for (const event of [closed, sealed]) {
			const sheet = Buffer.from(await (await client.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer());
			const filled = await fillSheet(sheet, { 'IT-1': [4 + k], 'IT-2': [5 - k], 'IT-3': [6] });
			expect((await uploadSheet(client, event.id, filled)).status).toBe(201);
		}
	}
	await untilPast(deadline);

	const plans = (await json(await buyer.client.get(`/api/events/${closed.id}/plans`, 'application/json')))
		.plans as { id: string; lowestCost: boolean }[];
	const dual = (
		await json(
			await post(buyer.client, `/api/events/${closed.id}/plans`, {
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

describe('the auditor’s home', () => {
	it('lists a closed event with its opening, its runs, the approval and its files', async () => {
		const html = await (await auditor.client.get('/audit')).text();
		const page = textOf(html);
		const from = page.indexOf(closed.reference);
		expect(from).toBeGreaterThan(-1);
		const section = page.slice(from, page.indexOf('Before the deadline'));
		expect(section).toContain('Awarded');
		expect(section).toMatch(/Deadline \d{4}-\d{2}-\d{2} \d{2}:\d{2} \(Europe\/Berlin\)/);
		expect(section).toContain('Bids opened 2 bids (2 revisions)');
		expect(section).toContain(`Approved Run 2 (Dual sourcing) by ${approver.user.name}`);
		expect(section).toContain(
			`Run 1 Lowest cost (no rules) Done (best possible) ${formatMoney(lowestRun.totalCost, 'EUR')} Not submitted`
		);
		expect(section).toContain(`Run 2 Dual sourcing Done (`);
		expect(section).toContain(formatMoney(approvedRun.totalCost, 'EUR'));
		expect(section).toContain(`Approved by ${approver.user.name}`);

		const links = hrefsOf(html);
		expect(links).toEqual(
			expect.arrayContaining([
				`/events/${closed.id}/trail`,
				`/api/events/${closed.id}/tabulation?format=xlsx`,
				`/api/runs/${lowestRun.id}/export`,
				`/api/runs/${approvedRun.id}/export`,
				`/api/runs/${approvedRun.id}/report?format=pdf`
			])
		);
		// The report is made only for a run submitted for sign-off.
		expect(links).not.toContain(`/api/runs/${lowestRun.id}/report?format=pdf`);
	});

	it('links only to what the auditor may read', async () => {
		const html = await (await auditor.client.get('/audit')).text();
		const links = hrefsOf(html).filter((href) => href.startsWith('/events/') || href.startsWith('/api/'));
		expect(links.length).toBeGreaterThanOrEqual(6);
		for (const href of links) expect([href, (await auditor.client.get(href)).status]).toEqual([href, 200]);
	});

	it('shows an event still open for bids by name, state and deadline only', async () => {
		const html = await (await auditor.client.get('/audit')).text();
		const page = textOf(html);
		const from = page.indexOf(sealed.reference);
		expect(from).toBeGreaterThan(page.indexOf('Before the deadline'));
		const row = page.slice(from, from + 120);
		expect(row).toMatch(/Open for bids \d{4}-\d{2}-\d{2} \d{2}:\d{2} \(Europe\/Berlin\)/);
		expect(row).not.toMatch(/\bbids? opened|revision|\b2 bids/i);
		expect(hrefsOf(html).some((href) => href.includes(sealed.id))).toBe(false);
	});

	it('leaves out another organisation’s events', async () => {
		const html = await (await auditor.client.get('/audit')).text();
		expect(html).not.toContain(elsewhere.reference);
		expect(html).not.toContain(elsewhere.id);
	});

	it('says what will appear, and when, to an auditor of an organisation without events', async () => {
		const organisation = await anOrganisation('buyer');
		const { client } = await aSignedInUser('auditor', { organisationId: organisation.id });
		const page = textOf(await (await client.get('/audit')).text());
		expect(page).toContain(`No event of ${organisation.name} has been published yet.`);
		expect(page).toContain('after the deadline with the bids opened, the award runs');
	});

	// The page read every closed event's runs and sign-offs at once: an organisation's closed events only
	// grow. Twenty a page, newest deadline first (AUDIT_PAGE in services/home.ts).
	it('pages the events past their deadline, twenty at a time, newest deadline first', async () => {
		const organisation = await anOrganisation('buyer');
		const { user, client } = await aSignedInUser('auditor', { organisationId: organisation.id });
		const made: TestEvent[] = [];
		for (let k = 0; k < 21; k++) {
			// Deadlines k + 1 days ago: event 0 is the newest, event 20 the oldest. The page opens each on its
			// first read after the deadline, as any read does.
			const event = await anOpenEvent({
				createdBy: user.id,
				invite: [],
				organisationId: organisation.id,
				deadline: new Date(Date.now() - (k + 1) * 86_400_000)
			});
			made.push(event);
		}
		const read = async (query: string) => (await client.get(`/audit${query}`)).text();
		const first = await read('');
		expect(textOf(first)).toContain('21 events, newest deadline first; page 1 of 2.');
		for (const event of made.slice(0, 20)) expect(first).toContain(event.reference);
		expect(first).not.toContain(made[20]!.reference);
		expect(hrefsOf(first)).toContain('?page=2');
		const second = await read('?page=2');
		expect(second).toContain(made[20]!.reference);
		expect(second).not.toContain(made[0]!.reference);
		expect(hrefsOf(second)).toContain('?page=1');
		// A page out of range or not a number shows the nearest page, never an error.
		expect(await read('?page=99')).toContain(made[20]!.reference);
		expect(await read('?page=abc')).toContain(made[0]!.reference);
	});
});

describe('the auditor’s run page', () => {
	it('shows an approved run read-only with its total, plan, sign-off and files', async () => {
		const response = await auditor.client.get(`/audit/runs/${approvedRun.id}`);
		expect(response.status).toBe(200);
		const html = await response.text();
		const page = textOf(html);
		expect(page).toContain(`Run 2 · ${closed.reference}`);
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
				`/events/${closed.id}/trail`,
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
		expect(await page.text()).not.toContain(closed.reference);
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
