// Finding 8 of issue 9: a request from another site, carried by a signed-in buyer's browser, must not
// change anything. SvelteKit's own check covered only form content types.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browserless } from '../support/http';
import { closeTestDb, testDb, type TestUser } from '../support/factories';
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

afterAll(closeTestDb);

const EVIL = 'http://evil.test';
let buyer: { user: TestUser; client: Browserless };
let event: TestEvent;
let planId: string;

const runsOfEvent = async () =>
	Number((await testDb()('award_runs').where({ event_id: event.id }).count({ n: '*' }))[0]!.n);

beforeAll(async () => {
	buyer = await aSignedInUser('buyer');
	const { organisation, user } = await aSupplierOrganisationWithUser();
	const bidder = await signedIn(user);
	// A published deadline can only move later, even in SQL: the event closes a few seconds from now.
	const deadline = new Date(Date.now() + 15_000);
	event = await anOpenEvent({ createdBy: buyer.user.id, invite: [organisation.id], deadline });
	const sheet = Buffer.from(await (await bidder.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer());
	const filled = await fillSheet(sheet, { 'IT-1': [4], 'IT-2': [5], 'IT-3': [6] });
	expect((await uploadSheet(bidder, event.id, filled)).status).toBe(201);
	await untilPast(deadline);
	const plans = (await (
		await buyer.client.get(`/api/events/${event.id}/plans`, 'application/json')
	).json()) as {
		plans: { id: string; lowestCost: boolean }[];
	};
	planId = plans.plans.find((p) => p.lowestCost)!.id;
});

describe('requests from another site', () => {
	it('refuses a bodiless POST from another origin that would start an award run, and starts none', async () => {
		const response = await buyer.client.request(`/api/plans/${planId}/runs`, {
			method: 'POST',
			origin: EVIL,
			accept: 'application/json'
		});
		expect(response.status).toBe(403);
		expect(await response.json()).toMatchObject({
			message: 'This request came from another site and was refused.',
			errorId: expect.any(String)
		});
		expect(await runsOfEvent()).toBe(0);
	});

	it('refuses PUT, DELETE and PATCH from another origin before any route runs', async () => {
		for (const method of ['PUT', 'DELETE', 'PATCH']) {
			const response = await buyer.client.request(`/api/plans/${planId}/runs`, {
				method,
				origin: EVIL,
				accept: 'application/json'
			});
			expect(response.status, method).toBe(403);
		}
		expect(await runsOfEvent()).toBe(0);
	});

	it('refuses a JSON POST from another origin', async () => {
		const response = await buyer.client.request(`/api/plans/${planId}/runs`, {
			method: 'POST',
			origin: EVIL,
			body: JSON.stringify({}),
			headers: { 'content-type': 'application/json' },
			accept: 'application/json'
		});
		expect(response.status).toBe(403);
		expect(await runsOfEvent()).toBe(0);
	});

	it('refuses a form POST from another origin to the award page', async () => {
		const response = await buyer.client.request(`/buyer/events/${event.id}/award?/run`, {
			method: 'POST',
			origin: EVIL,
			body: new URLSearchParams({ planId })
		});
		expect(response.status).toBe(403);
		expect(await runsOfEvent()).toBe(0);
	});

	it('refuses a POST without Origin that the browser marks cross-site', async () => {
		const response = await buyer.client.request(`/api/plans/${planId}/runs`, {
			method: 'POST',
			origin: null,
			headers: { 'sec-fetch-site': 'cross-site' },
			accept: 'application/json'
		});
		expect(response.status).toBe(403);
		expect(await runsOfEvent()).toBe(0);
	});

	it('refuses a POST that carries neither Origin nor Sec-Fetch-Site', async () => {
		const response = await buyer.client.request(`/api/plans/${planId}/runs`, {
			method: 'POST',
			origin: null,
			accept: 'application/json'
		});
		expect(response.status).toBe(403);
		expect(await runsOfEvent()).toBe(0);
	});

	it('refuses a POST from a sibling origin on another port', async () => {
		const own = new URL(process.env.APP_URL!);
		const response = await buyer.client.request(`/api/plans/${planId}/runs`, {
			method: 'POST',
			origin: `${own.protocol}//${own.hostname}:${Number(own.port) + 1}`,
			accept: 'application/json'
		});
		expect(response.status).toBe(403);
		expect(await runsOfEvent()).toBe(0);
	});

	it('still starts the run for the same request from the app’s own origin', async () => {
		const response = await buyer.client.request(`/api/plans/${planId}/runs`, {
			method: 'POST',
			accept: 'application/json'
		});
		expect(response.status).toBe(202);
		expect(await runsOfEvent()).toBe(1);
	});
});
