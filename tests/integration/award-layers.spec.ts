// The award side under the house rules, checked from outside: a job that cannot be queued rolls back the
// change that needed it; listing plans writes nothing; the rules live in the services (a returned run
// needs a comment, also through the API); the buyer's event page answers 404 for events not its own;
// of two answers to one question at once, exactly one is published.
import knex from 'knex';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { canonicalJson, sha256 } from '../../src/lib/server/trail';
import { aUser, anOrganisation, closeTestDb, testDb, type TestUser } from '../support/factories';
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
import { databaseOwnerUrl } from '../support/env';
import type { Browserless } from '../support/http';

const owner = knex({ client: 'pg', connection: databaseOwnerUrl(), pool: { min: 0, max: 2 } });
afterAll(async () => {
	await owner.destroy();
	await closeTestDb();
});

const json = async (response: Response) => (await response.json()) as Record<string, unknown>;

let buyer: { user: TestUser; client: Browserless };
let event: TestEvent;

beforeAll(async () => {
	buyer = await aSignedInUser('buyer');
	const { organisation, user } = await aSupplierOrganisationWithUser();
	const bidder = await signedIn(user);
	// A published deadline can only move later, even in SQL: the event closes a few seconds from now.
	const deadline = new Date(Date.now() + 12_000);
	event = await anOpenEvent({ createdBy: buyer.user.id, invite: [organisation.id], deadline });
	const sheet = Buffer.from(await (await bidder.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer());
	const filled = await fillSheet(sheet, { 'IT-1': [4], 'IT-2': [5], 'IT-3': [6] });
	expect((await uploadSheet(bidder, event.id, filled)).status).toBe(201);
	await untilPast(deadline);
	// The first read after the deadline opens the bids, and with them the lowest-cost plan is made.
	expect((await buyer.client.get(`/api/events/${event.id}`, 'application/json')).status).toBe(200);
}, 60_000);

const plansOf = (eventId: string) => testDb()('award_plans').where({ event_id: eventId });

/** The event's lowest-cost plan, as the plans API lists it. */
async function lowestCostPlan(): Promise<{ id: string; name: string }> {
	const { plans } = (await json(
		await buyer.client.get(`/api/events/${event.id}/plans`, 'application/json')
	)) as { plans: { id: string; name: string; lowestCost: boolean }[] };
	return plans.find((p) => p.lowestCost)!;
}

describe('listing plans', () => {
	it('writes nothing: the award page and the plans API only read', async () => {
		const other = await anOpenEvent({ createdBy: buyer.user.id, invite: [] });
		// A closed event without a lowest-cost plan (as made in SQL): reading must not make one.
		await owner('events').where({ id: other.id }).update({ state: 'in_evaluation' });
		expect(await plansOf(other.id)).toEqual([]);
		const page = await buyer.client.get(`/buyer/events/${other.id}/award`);
		expect(page.status).toBe(200);
		const api = await json(await buyer.client.get(`/api/events/${other.id}/plans`, 'application/json'));
		expect(api.plans).toEqual([]);
		expect(await plansOf(other.id)).toEqual([]);
	});

	it('has the lowest-cost plan once the bids are opened', async () => {
		const plans = (await plansOf(event.id)).filter((p: { lowest_cost: boolean }) => p.lowest_cost);
		expect(plans).toHaveLength(1);
	});
});

describe('a job that cannot be queued', () => {
	it('rolls back the run it was for: an error answer, no run row, no trail entry', async () => {
		const plan = await lowestCostPlan();
		expect(plan).toBeDefined();
		const trailBefore = Number(
			(await testDb()('trail_entries').where({ event_id: event.id }).count({ n: '*' }))[0]!.n
		);
		// A real fault in the database, scoped to this event: pg-boss's job table refuses this event's
		// award-run jobs (the run row is written first in the same transaction, so the trigger sees it).
		const fn = `refuse_award_job_${event.id.replace(/-/g, '')}`;
		await owner.raw(`
			create function pgboss.${fn}() returns trigger language plpgsql as $$
			begin
				if new.name = 'award-run' and exists (
					select 1 from public.award_runs r
					where r.id = (new.data->>'runId')::uuid and r.event_id = '${event.id}'
				) then
					raise exception 'job table refuses this job (test fault)';
				end if;
				return new;
			end $$;
			create trigger ${fn} before insert on pgboss.job for each row execute function pgboss.${fn}();
		`);
		try {
			const started = await buyer.client.request(`/api/plans/${plan.id}/runs`, {
				method: 'POST',
				body: '{}',
				headers: { 'content-type': 'application/json' },
				accept: 'application/json'
			});
			expect(started.status).toBeGreaterThanOrEqual(500);
		} finally {
			await owner.raw(`drop trigger if exists ${fn} on pgboss.job; drop function if exists pgboss.${fn}();`);
		}
		expect(await testDb()('award_runs').where({ event_id: event.id })).toEqual([]);
		const trailAfter = Number(
			(await testDb()('trail_entries').where({ event_id: event.id }).count({ n: '*' }))[0]!.n
		);
		expect(trailAfter).toBe(trailBefore);
		const state = (await testDb()('events').where({ id: event.id }).first('state')).state;
		expect(state).toBe('closed');
	});
});

describe('the buyer’s event page', () => {
	it('answers 404 for an unknown or another organisation’s event, on the page and its actions', async () => {
		const stranger = await anOrganisation('buyer');
		const [foreign] = await testDb()('events')
			.insert({
				organisation_id: stranger.id,
				reference: `FOREIGN-${Date.now()}`,
				title: 'Another organisation’s event',
				currency: 'EUR',
				incoterm: 'DAP',
				delivery_place: 'Elsewhere',
				deadline: new Date(Date.now() + 7 * 24 * 3600_000),
				time_zone: 'Europe/Berlin',
				state: 'open',
				published_at: new Date(),
				created_by: buyer.user.id
			})
			.returning('id');
		for (const id of ['00000000-0000-4000-8000-000000000000', foreign.id]) {
			expect((await buyer.client.get(`/buyer/events/${id}`)).status).toBe(404);
			// Asked for JSON, a form action answers with its own outcome (a page would show the layout's 404).
			const amend = await buyer.client.postForm(
				`/buyer/events/${id}?/amend`,
				{
					summary: 'Later deadline',
					description: '',
					deliveryPlace: 'Anywhere',
					deadlineLocal: '2099-01-01T12:00'
				},
				'application/json'
			);
			expect(amend.status).toBe(200);
			expect(await amend.json()).toMatchObject({ type: 'failure', status: 404 });
		}
	});
});

describe('returning a run', () => {
	it('needs a comment through the API too: 422 naming the field', async () => {
		const approver = await aSignedInUser('approver');
		const problem = {
			currency: 'EUR',
			items: [{ ref: 'IT-1', quantity: 10 }],
			suppliers: [{ ref: 'S1' }],
			bids: [{ supplier: 'S1', item: 'IT-1', unitPrice: 3 }],
			bundles: [],
			rules: []
		};
		const plan = await lowestCostPlan();
		const [run] = await testDb()('award_runs')
			.insert({
				event_id: event.id,
				plan_id: plan.id,
				number: 99,
				plan_name: plan.name,
				status: 'done',
				problem: JSON.stringify(problem),
				problem_sha256: sha256(canonicalJson(problem)),
				created_by: buyer.user.id
			})
			.returning('id');
		for (const comment of ['', '   ']) {
			const response = await approver.client.request(`/api/runs/${run.id}/decision`, {
				method: 'POST',
				body: JSON.stringify({ decision: 'return', comment }),
				headers: { 'content-type': 'application/json' },
				accept: 'application/json'
			});
			expect(response.status).toBe(422);
			expect(await response.json()).toMatchObject({ field: 'comment' });
		}
	});
});

describe('answers to one question at once', () => {
	it('publishes exactly one; the others are told it was answered already (409)', async () => {
		const { organisation, user } = await aSupplierOrganisationWithUser();
		const open = await anOpenEvent({ createdBy: buyer.user.id, invite: [organisation.id] });
		const [question] = await testDb()('questions')
			.insert({
				event_id: open.id,
				supplier_organisation_id: organisation.id,
				asked_by: user.id,
				text: 'May we deliver in two lots?'
			})
			.returning('id');
		// Five buyers of the organisation answer at the same moment.
		const others = await Promise.all([1, 2, 3, 4].map(async () => signedIn(await aUser('buyer'))));
		const answer = (client: Browserless, text: string) =>
			client.postForm(`/buyer/events/${open.id}/questions?/answer`, {
				questionId: question.id,
				publishedQuestion: 'May suppliers deliver in two lots?',
				answer: text
			});
		const answers = [buyer.client, ...others].map((client, k) => answer(client, `Answer ${k + 1}.`));
		const statuses = (await Promise.all(answers)).map((r) => r.status);
		expect(statuses.sort()).toEqual([200, 409, 409, 409, 409]);
		const trail = await testDb()('trail_entries').where({ event_id: open.id, action: 'answer published' });
		expect(trail).toHaveLength(1);
	});
});
