// Finding 11 of issue 9: a second buying organisation's admin managed the first one's users, every
// organisation was listed to any buyer, and a run opened under another event's address.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browserless } from '../support/http';
import { aUser, anOrganisation, closeTestDb, testDb, type TestUser } from '../support/factories';
import {
	aSignedInUser,
	aStoredRun,
	aSupplierOrganisationWithUser,
	anOpenEvent,
	fillSheet,
	signedIn,
	TWO_BID_PROBLEM,
	untilPast,
	uploadSheet
} from '../support/events';

afterAll(closeTestDb);

type ActionResult = { type: string; status: number; data: string };
const actionResult = async (response: Response) => (await response.json()) as ActionResult;

let firstBuyer: { user: TestUser; client: Browserless };
let firstAdmin: { user: TestUser; client: Browserless };
let secondOrganisation: { id: string; name: string };
let secondAdmin: { user: TestUser; client: Browserless };
let secondStaff: TestUser;
let firstSupplier: { organisation: { id: string; name: string }; user: TestUser };

beforeAll(async () => {
	firstBuyer = await aSignedInUser('buyer');
	firstAdmin = await aSignedInUser('admin');
	secondOrganisation = await anOrganisation('buyer');
	secondAdmin = await aSignedInUser('admin', { organisationId: secondOrganisation.id });
	secondStaff = await aUser('buyer', { organisationId: secondOrganisation.id });
	firstSupplier = await aSupplierOrganisationWithUser();
	await anOpenEvent({ createdBy: firstBuyer.user.id, invite: [firstSupplier.organisation.id] });
});

describe('an admin of a second buying organisation', () => {
	it('does not see the first organisation’s staff or its suppliers’ users, only its own', async () => {
		const page = await (await secondAdmin.client.get('/admin/users')).text();
		expect(page).toContain(secondStaff.email);
		expect(page).not.toContain(firstBuyer.user.email);
		expect(page).not.toContain(firstAdmin.user.email);
		expect(page).not.toContain(firstSupplier.user.email);
		expect(page).not.toContain(firstSupplier.organisation.name);
	});

	it('cannot deactivate a user of the first organisation: there is no such user for it', async () => {
		const response = await secondAdmin.client.postForm(
			'/admin/users?/setActive',
			{ userId: String(firstBuyer.user.id), active: 'false' },
			'application/json'
		);
		expect(await actionResult(response)).toMatchObject({ type: 'failure', status: 404 });
		const row = await testDb()('users').where({ id: firstBuyer.user.id }).first('deactivated_at');
		expect(row.deactivated_at).toBeNull();
		expect((await firstBuyer.client.get('/api/me', 'application/json')).status).toBe(200);
	});

	it('cannot change the role of, or resend an invitation to, a user of the first organisation', async () => {
		const role = await secondAdmin.client.postForm(
			'/admin/users?/setRole',
			{ userId: String(firstBuyer.user.id), role: 'approver' },
			'application/json'
		);
		expect(await actionResult(role)).toMatchObject({ type: 'failure', status: 404 });
		const resend = await secondAdmin.client.postForm(
			'/admin/users?/resend',
			{ userId: String(firstSupplier.user.id) },
			'application/json'
		);
		expect(await actionResult(resend)).toMatchObject({ type: 'failure', status: 404 });
		const row = await testDb()('users').where({ id: firstBuyer.user.id }).first('role');
		expect(row.role).toBe('buyer');
	});

	it('cannot add a user to a supplier that works with the first organisation', async () => {
		const email = `${Date.now()}-mole@example.test`;
		const response = await secondAdmin.client.postForm(
			'/admin/users?/invite',
			{
				email,
				name: 'A mole',
				role: 'supplier',
				supplierOrganisationId: firstSupplier.organisation.id,
				newSupplierName: ''
			},
			'application/json'
		);
		expect((await actionResult(response)).status).toBe(422);
		expect(await testDb()('users').where({ email }).first()).toBeUndefined();
	});

	it('puts the staff it invites into its own organisation', async () => {
		const email = `${Date.now()}-staff@example.test`;
		await secondAdmin.client.postForm('/admin/users?/invite', {
			email,
			name: 'New staff',
			role: 'approver',
			supplierOrganisationId: '',
			newSupplierName: ''
		});
		const row = await testDb()('users').where({ email }).first('organisation_id');
		expect(row.organisation_id).toBe(secondOrganisation.id);
	});
});

describe('an admin of the first organisation', () => {
	it('still sees and manages its staff and the users of the suppliers it invited', async () => {
		const page = await (await firstAdmin.client.get('/admin/users')).text();
		expect(page).toContain(firstBuyer.user.email);
		expect(page).toContain(firstSupplier.user.email);
		expect(page).not.toContain(secondStaff.email);
		const other = await aUser('approver');
		const response = await firstAdmin.client.postForm(
			'/admin/users?/setActive',
			{ userId: String(other.id), active: 'false' },
			'application/json'
		);
		expect((await actionResult(response)).type).toBe('success');
	});
});

describe('lists of organisations', () => {
	type Listed = { id: string; name: string; kind: string }[];

	it('refuses kind=all to a buyer', async () => {
		const response = await firstBuyer.client.get('/api/organisations?kind=all', 'application/json');
		expect(response.status).toBe(403);
	});

	it('shows a buyer no other buying organisation', async () => {
		const own = (await (
			await firstBuyer.client.get('/api/organisations?kind=buyer', 'application/json')
		).json()) as Listed;
		expect(own.map((o) => o.id)).toEqual([firstBuyer.user.organisationId]);
		const suppliers = (await (
			await firstBuyer.client.get('/api/organisations', 'application/json')
		).json()) as Listed;
		expect(suppliers.every((o) => o.kind === 'supplier')).toBe(true);
		expect(suppliers.map((o) => o.id)).toContain(firstSupplier.organisation.id);
	});

	it('shows the second admin its own organisation and no supplier of the first', async () => {
		const all = (await (
			await secondAdmin.client.get('/api/organisations?kind=all', 'application/json')
		).json()) as Listed;
		expect(all.map((o) => o.id)).toEqual([secondOrganisation.id]);
	});
});

describe('objects under another object’s address', () => {
	let runOfA: string;
	let planOfA: string;
	let eventB: string;

	beforeAll(async () => {
		const { organisation } = await aSupplierOrganisationWithUser();
		const a = await anOpenEvent({ createdBy: firstBuyer.user.id, invite: [organisation.id] });
		eventB = (await anOpenEvent({ createdBy: firstBuyer.user.id, invite: [organisation.id] })).id;
		const [plan] = await testDb()('award_plans')
			.insert({ event_id: a.id, name: 'Lowest cost (no rules)', rules: '[]', lowest_cost: true })
			.returning('id');
		planOfA = plan.id;
		const [run] = await testDb()('award_runs')
			.insert({
				event_id: a.id,
				plan_id: plan.id,
				number: 1,
				plan_name: 'Lowest cost (no rules)',
				status: 'failed',
				error: 'left failed by the test',
				problem: JSON.stringify({}),
				problem_sha256: '0'.repeat(64),
				created_by: firstBuyer.user.id
			})
			.returning('id');
		runOfA = run.id;
	});

	it('answers 404 for a run of event A opened under event B’s address', async () => {
		const response = await firstBuyer.client.get(`/buyer/events/${eventB}/award/runs/${runOfA}`);
		expect(response.status).toBe(404);
		expect(await response.text()).not.toContain('left failed by the test');
	});

	it('refuses to submit a run of event A through event B’s address', async () => {
		const response = await firstBuyer.client.postForm(
			`/buyer/events/${eventB}/award/runs/${runOfA}?/submit`,
			{ justification: 'A justification long enough to be accepted.' },
			'application/json'
		);
		expect(await actionResult(response)).toMatchObject({ type: 'failure', status: 404 });
		expect(await testDb()('signoffs').where({ run_id: runOfA }).first()).toBeUndefined();
	});

	it('refuses to start a plan of event A from event B’s award page', async () => {
		const response = await firstBuyer.client.postForm(
			`/buyer/events/${eventB}/award?/run`,
			{ planId: planOfA },
			'application/json'
		);
		expect(await actionResult(response)).toMatchObject({ type: 'failure', status: 404 });
		expect(await testDb()('award_runs').where({ plan_id: planOfA }).count({ n: '*' })).toEqual([{ n: '1' }]);
	});

	it('refuses to compare a run of event A on event B’s page', async () => {
		const response = await firstBuyer.client.get(
			`/buyer/events/${eventB}/award/compare?run=${runOfA}&run=${runOfA}`
		);
		expect(response.status).toBe(404);
	});
});

// Last: the shared supplier it adds is one of the second organisation's suppliers from then on.
describe('a supplier that works with both buying organisations', () => {
	// Before: either organisation's admin could deactivate the shared supplier's user, which locked it out
	// of the other organisation's events too.
	it('cannot be deactivated or have its users changed by either admin', async () => {
		const shared = await aSupplierOrganisationWithUser();
		await anOpenEvent({ createdBy: firstBuyer.user.id, invite: [shared.organisation.id] });
		await anOpenEvent({
			createdBy: secondStaff.id,
			organisationId: secondOrganisation.id,
			invite: [shared.organisation.id]
		});
		for (const admin of [firstAdmin, secondAdmin]) {
			const deactivate = await admin.client.postForm(
				'/admin/users?/setActive',
				{ userId: String(shared.user.id), active: 'false' },
				'application/json'
			);
			const refused = await actionResult(deactivate);
			expect(refused).toMatchObject({ type: 'failure', status: 403 });
			expect(refused.data).toContain('also works with another buying organisation');
			const role = await admin.client.postForm(
				'/admin/users?/setRole',
				{ userId: String(shared.user.id), role: 'buyer' },
				'application/json'
			);
			expect(await actionResult(role)).toMatchObject({ type: 'failure', status: 403 });
		}
		const row = await testDb()('users').where({ id: shared.user.id }).first('deactivated_at', 'role');
		expect(row).toEqual({ deactivated_at: null, role: 'supplier' });
	});
});

// Issue 12's review: an admin of the buying organisation read opened prices, runs and the trail through
// the staff API, though the role's duty is users (src/lib/roles.ts roleDuties). Separation of duties
// keeps commercial content to those who evaluate it (common practice in public and private buying).
describe('an admin of the buying organisation', () => {
	it('reads no opened bids, tabulation, plans, runs, reports or trail; a buyer does', async () => {
		const deadline = new Date(Date.now() + 4_000);
		const event = await anOpenEvent({
			createdBy: firstBuyer.user.id,
			invite: [firstSupplier.organisation.id],
			deadline
		});
		const supplier = await signedIn(firstSupplier.user);
		const sheet = Buffer.from(await (await supplier.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer());
		expect((await uploadSheet(supplier, event.id, await fillSheet(sheet, { 'IT-1': [4.25] }))).status).toBe(
			201
		);
		await untilPast(deadline);
		const run = await aStoredRun({
			eventId: event.id,
			createdBy: firstBuyer.user.id,
			problem: TWO_BID_PROBLEM,
			fields: { status: 'done', result: JSON.stringify({ status: 'optimal', totalCost: 25, awards: [] }) }
		});
		const paths = [
			`/api/events/${event.id}/bids`,
			`/api/events/${event.id}/tabulation`,
			`/api/events/${event.id}/plans`,
			`/api/events/${event.id}/runs?run=${run.id}`,
			`/api/events/${event.id}/trail`,
			`/api/runs/${run.id}`,
			`/api/runs/${run.id}/lines`,
			`/api/runs/${run.id}/export`,
			`/api/runs/${run.id}/report?format=pdf`
		];
		for (const path of paths) {
			const response = await firstAdmin.client.get(path, 'application/json');
			const body = await response.text();
			expect(response.status, path).toBe(403);
			expect(body, path).toContain('Administrators manage users');
			expect(body, path).not.toContain('4.25');
		}
		const buyerSees = await firstBuyer.client.get(`/api/events/${event.id}/bids`, 'application/json');
		expect(buyerSees.status).toBe(200);
		expect(await buyerSees.text()).toContain('4.25');
	});
});
