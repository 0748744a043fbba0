// A plan's rule names its supplier by organisation id: the API takes the id or the exact name and stores
// the id, reads it back with the name, and a run solves with the name the engine knows.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browserless } from '../support/http';
import { anOrganisation, closeTestDb, testDb, type TestUser } from '../support/factories';
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

afterAll(closeTestDb);

type Party = { client: Browserless; organisationId: string; name: string };
type PlanJson = {
	id: string;
	rules: { who?: unknown }[];
	suppliers: { id: string; name: string | null }[];
	preview: string[];
};
const json = async (response: Response) => (await response.json()) as Record<string, unknown>;

async function aBidder(): Promise<Party> {
	const { organisation, user } = await aSupplierOrganisationWithUser();
	return { client: await signedIn(user), organisationId: organisation.id, name: organisation.name };
}

let buyer: { user: TestUser; client: Browserless };
let a: Party;
let b: Party;
let outsider: { id: string; name: string };
let event: TestEvent;

const storedRules = async (planId: string) =>
	((await testDb()('award_plans').where({ id: planId }).first()) as { rules: { who?: unknown }[] }).rules;

beforeAll(async () => {
	[buyer, a, b, outsider] = await Promise.all([
		aSignedInUser('buyer'),
		aBidder(),
		aBidder(),
		anOrganisation('supplier')
	]);
	const deadline = new Date(Date.now() + 12_000);
	event = await anOpenEvent({
		createdBy: buyer.user.id,
		invite: [a.organisationId, b.organisationId],
		deadline
	});
	// A is the cheaper on every item: the lowest-cost award gives it everything.
	for (const [who, prices] of [
		[a, [4, 5, 6]],
		[b, [4.5, 5.5, 6.5]]
	] as const) {
		const sheet = Buffer.from(
			await (await who.client.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer()
		);
		const filled = await fillSheet(sheet, { 'IT-1': [prices[0]], 'IT-2': [prices[1]], 'IT-3': [prices[2]] });
		expect((await uploadSheet(who.client, event.id, filled)).status).toBe(201);
	}
	await untilPast(deadline);
}, 60_000);

describe('suppliers in plan rules', () => {
	it('stores a supplier given by its exact name as its organisation id, and reads it back with the name', async () => {
		const made = await post(buyer.client, `/api/events/${event.id}/plans`, {
			name: 'Without A, by name',
			rules: [{ type: 'exclude', scope: { item: 'IT-1' }, who: { supplier: a.name } }]
		});
		expect(made.status, JSON.stringify(await made.clone().json())).toBe(201);
		const plan = (await json(made)).plan as PlanJson;
		expect(plan.rules[0]!.who).toEqual({ supplier: a.organisationId });
		expect(plan.suppliers).toEqual([{ id: a.organisationId, name: a.name }]);
		expect(plan.preview).toEqual([`${a.name} gets nothing of item IT-1`]);
		expect((await storedRules(plan.id))[0]!.who).toEqual({ supplier: a.organisationId });

		const listed = (await json(await buyer.client.get(`/api/events/${event.id}/plans`, 'application/json')))
			.plans as PlanJson[];
		const again = listed.find((p) => p.id === plan.id)!;
		expect(again.rules[0]!.who).toEqual({ supplier: a.organisationId });
		expect(again.preview).toEqual([`${a.name} gets nothing of item IT-1`]);
	});

	it('saves a plan whose rule names its supplier by organisation id', async () => {
		const made = await post(buyer.client, `/api/events/${event.id}/plans`, {
			name: 'A capped, by id',
			rules: [{ type: 'max_share', scope: 'each_item', who: { supplier: a.organisationId }, percent: 40 }]
		});
		expect(made.status, JSON.stringify(await made.clone().json())).toBe(201);
		const plan = (await json(made)).plan as PlanJson;
		expect((await storedRules(plan.id))[0]!.who).toEqual({ supplier: a.organisationId });
		expect(plan.preview).toEqual([`${a.name} gets no more than 40% of any item`]);
	});

	it('refuses a supplier id that is not invited and an unknown item, naming each rule by its number', async () => {
		const name = 'Names strangers';
		const bad = await post(buyer.client, `/api/events/${event.id}/plans`, {
			name,
			rules: [
				{ type: 'exclude', scope: 'event', who: { supplier: b.organisationId } },
				{ type: 'max_share', scope: { item: 'NO-SUCH-ITEM' }, who: 'each_supplier', percent: 60 },
				{ type: 'exclude', scope: 'event', who: { supplier: outsider.id } }
			]
		});
		expect(bad.status).toBe(422);
		const message = String((await json(bad)).message);
		expect(message).toContain('Rule 2 (scope.item): this event has no item “NO-SUCH-ITEM”');
		expect(message).toContain(`Rule 3 (who.supplier): “${outsider.id}” is not invited to this event`);
		expect(message).not.toContain('Rule 1');
		expect(await testDb()('award_plans').where({ event_id: event.id, name }).first()).toBeUndefined();
	});

	it('runs a plan by supplier id so that the award keeps the rule on that supplier, named in the run', async () => {
		const made = await post(buyer.client, `/api/events/${event.id}/plans`, {
			name: 'Without A on IT-2',
			rules: [{ type: 'exclude', scope: { item: 'IT-2' }, who: { supplier: a.organisationId } }]
		});
		expect(made.status).toBe(201);
		const plan = (await json(made)).plan as PlanJson;
		const started = await json(await post(buyer.client, `/api/plans/${plan.id}/runs`, {}));
		expect(started.status, JSON.stringify(started)).toBe('queued');
		const run = await finished(buyer.client, started.runId as string, 100_000);
		expect(run.status).toBe('done');
		const awards = (run.result as { awards: { supplier: string; item: string; quantity: number }[] }).awards
			.filter((l) => l.quantity > 0)
			.map((l) => `${l.item}:${l.supplier}`)
			.sort();
		// A is the cheaper everywhere, so only the rule keeps it off IT-2.
		expect(awards).toEqual([`IT-1:${a.name}`, `IT-2:${b.name}`, `IT-3:${a.name}`]);
		expect((run.rules as { text: string }[]).map((r) => r.text)).toEqual([
			`${a.name} gets nothing of item IT-2`
		]);
	}, 120_000);

	it('offers the invited suppliers in the rule builder by organisation id, labelled by name', async () => {
		const page = await (await buyer.client.get(`/buyer/events/${event.id}/award`)).text();
		expect(page).toContain(`<option value="supplier:${a.organisationId}">${a.name}</option>`);
		expect(page).toContain(`<option value="supplier:${b.organisationId}">${b.name}</option>`);
		expect(page).not.toContain(outsider.name);
	});
});
