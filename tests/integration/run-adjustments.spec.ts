// Changing a run's allocation by hand: the preview names the rule a change breaks, by its label; solving
// the rest again keeps the buyer's changes and is never cheaper than the optimum without rules; the
// adjusted run is a run like any other (export, compare, submit, sign-off, trail).
//
// The figures are worked by hand from the bids below (no freight or duty): three items of 100, 200 and
// 300 units; A bids 4.00, 5.00, 6.00 and B 4.20, 4.90, 6.50 a unit. Without rules each item goes whole
// to its cheaper bid: 100 x 4.00 + 200 x 4.90 + 300 x 6.00 = 3,180.00. With "at most 80% of any item
// each" the cheaper bid gets 80%: IT-1 80 x 4.00 + 20 x 4.20 = 404.00, IT-2 160 x 4.90 + 40 x 5.00 = 984.00,
// IT-3 240 x 6.00 + 60 x 6.50 = 1,830.00; 3,218.00 in all.
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
import { finished, post } from '../support/runs';

afterAll(closeTestDb);

const json = async (response: Response) => (await response.json()) as Record<string, unknown>;
const CAP = 'Dual sourcing: at most 80% each';

let buyer: { user: TestUser; client: Browserless };
let approver: { user: TestUser; client: Browserless };
let event: TestEvent;
const names: Record<'A' | 'B', string> = { A: '', B: '' };
let capped: Record<string, unknown>;
let lowestTotal: number;

beforeAll(async () => {
	[buyer, approver] = await Promise.all([aSignedInUser('buyer'), aSignedInUser('approver')]);
	const bidders = await Promise.all([aSupplierOrganisationWithUser(), aSupplierOrganisationWithUser()]);
	names.A = bidders[0].organisation.name;
	names.B = bidders[1].organisation.name;
	const deadline = new Date(Date.now() + 15_000);
	event = await anOpenEvent({
		createdBy: buyer.user.id,
		invite: bidders.map((b) => b.organisation.id),
		deadline
	});
	for (const [k, prices] of [
		[0, [4, 5, 6]],
		[1, [4.2, 4.9, 6.5]]
	] as const) {
		const client = await signedIn(bidders[k].user);
		const sheet = Buffer.from(await (await client.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer());
		const filled = await fillSheet(sheet, { 'IT-1': [prices[0]], 'IT-2': [prices[1]], 'IT-3': [prices[2]] });
		expect((await uploadSheet(client, event.id, filled)).status).toBe(201);
	}
	await untilPast(deadline);
	const plans = (await json(await buyer.client.get(`/api/events/${event.id}/plans`, 'application/json')))
		.plans as { id: string; lowestCost: boolean }[];
	const lowest = await finished(
		buyer.client,
		(await json(await post(buyer.client, `/api/plans/${plans.find((p) => p.lowestCost)!.id}/runs`, {})))
			.runId as string
	);
	lowestTotal = (lowest.result as { totalCost: number }).totalCost;
	const plan = await post(buyer.client, `/api/events/${event.id}/plans`, {
		name: 'Dual sourcing',
		rules: [{ type: 'max_share', label: CAP, scope: 'each_item', who: 'each_supplier', percent: 80 }]
	});
	expect(plan.status).toBe(201);
	const planId = ((await json(plan)).plan as { id: string }).id;
	capped = await finished(
		buyer.client,
		(await json(await post(buyer.client, `/api/plans/${planId}/runs`, {}))).runId as string
	);
}, 120_000);

const adjust = (body: unknown) => post(buyer.client, `/api/runs/${capped.id}/adjustments`, body);

describe('changing a run by hand', () => {
	it('starts from the figures worked by hand', () => {
		expect(lowestTotal).toBeCloseTo(3180, 6);
		expect(capped.status).toBe('done');
		expect((capped.result as { totalCost: number }).totalCost).toBeCloseTo(3218, 6);
	});

	it('prices a lock at once and names the rule it breaks, by its label and by how much', async () => {
		const response = await adjust({ changes: [{ kind: 'lock', item: 'IT-1', supplier: names.A }] });
		expect(response.status).toBe(200);
		const preview = await json(response);
		// IT-1 all to A: 100 x 4.00 = 400.00 instead of 404.00.
		expect(preview.total).toBeCloseTo(3214, 6);
		expect((preview.changes as { costChange: number }[])[0]!.costChange).toBeCloseTo(-4, 6);
		expect(preview.broken).toEqual([`${CAP}: ${names.A} has 100 of 100 in IT-1, above its 80% (80) by 20`]);
		// The page shows the same, with the rule's label, after a plain form post (no script needed).
		const form = new URLSearchParams({ changes: '[]', kind: 'lock', item: 'IT-1', supplier: names.A });
		const page = await buyer.client.request(`/buyer/events/${event.id}/award/runs/${capped.id}/adjust?/add`, {
			method: 'POST',
			body: form,
			accept: 'text/html'
		});
		const html = await page.text();
		expect(html).toContain('Rules these changes break (1)');
		expect(html).toContain(`${CAP}: ${names.A} has 100 of 100 in IT-1, above its 80% (80) by 20`);
	});

	it('keeps fixed quantities out of plans: they are changes by hand, made on a run with a justification', async () => {
		const plan = await post(buyer.client, `/api/events/${event.id}/plans`, {
			name: 'Pinned',
			rules: [{ type: 'fixed_quantity', scope: { item: 'IT-1' }, who: { supplier: names.B }, quantity: 100 }]
		});
		expect(plan.status).toBe(422);
		expect(JSON.stringify(await plan.json())).toContain('a fixed quantity is set by changing a run by hand');
	});

	it('refuses a change the bids do not allow, and a costly change without a justification', async () => {
		const tooMuch = await adjust({
			changes: [{ kind: 'move', item: 'IT-2', supplier: names.B, to: names.A, quantity: 500 }]
		});
		expect(tooMuch.status).toBe(422);
		expect((await json(tooMuch)).message).toBe(
			`Change 1: ${names.B} has 160 of IT-2 in this allocation; it cannot give 500.`
		);
		const unjustified = await adjust({
			changes: [{ kind: 'move', item: 'IT-2', supplier: names.B, to: names.A, quantity: 20 }],
			save: true
		});
		expect(unjustified.status).toBe(422);
		expect((await json(unjustified)).message).toMatch(/^Change 1 costs money: say why/);
	});

	it('solves the rest with the change kept, never below the optimum without rules, as a run like any other', async () => {
		// 20 of IT-2 from B to A: B 140 x 4.90 + A 60 x 5.00 = 986.00, 2.00 more; the rest as before.
		const change = { kind: 'move', item: 'IT-2', supplier: names.B, to: names.A, quantity: 20 };
		const justification = 'A holds the tooling for IT-2; a larger share keeps its line running.';
		const saved = await adjust({ changes: [{ ...change, justification }], save: true });
		expect(saved.status).toBe(202);
		const adjusted = await finished(buyer.client, (await json(saved)).runId as string);
		expect(adjusted.status).toBe('done');
		const result = adjusted.result as {
			totalCost: number;
			status: string;
			awards: { supplier: string; item: string; quantity: number }[];
		};
		expect(result.status).toBe('optimal');
		expect(result.totalCost).toBeCloseTo(3220, 6);
		expect(result.totalCost).toBeGreaterThanOrEqual(lowestTotal);
		const onIt2 = Object.fromEntries(
			result.awards.filter((l) => l.item === 'IT-2').map((l) => [l.supplier, l.quantity])
		);
		expect(onIt2).toEqual({ [names.B]: 140, [names.A]: 60 });
		expect(adjusted.adjustedFrom).toBe(capped.id);
		const [recorded] = adjusted.adjustments as Record<string, unknown>[];
		expect(recorded).toMatchObject({
			kind: 'move',
			item: 'IT-2',
			justification,
			by: { id: buyer.user.id }
		});
		expect(recorded!.costChange).toBeCloseTo(2, 6);

		// Exported, compared, submitted and signed off like any run; the trail holds the change and who made it.
		expect((await buyer.client.get(`/api/runs/${adjusted.id}/export`)).status).toBe(200);
		const compare = await buyer.client.get(
			`/buyer/events/${event.id}/award/compare?run=${capped.id}&run=${adjusted.id}`
		);
		expect(compare.status).toBe(200);
		const submitted = await post(buyer.client, `/api/runs/${adjusted.id}/submit`, {
			justification: 'Lowest cost that keeps the tooling where it is.'
		});
		expect(submitted.status).toBe(200);
		const decided = await post(approver.client, `/api/runs/${adjusted.id}/decision`, {
			decision: 'approve',
			comment: 'Agreed.'
		});
		expect(decided.status).toBe(200);
		const trail = await testDb()('trail_entries').where({ event_id: event.id }).orderBy('seq');
		const queued = trail.find((e: { action: string }) => e.action === 'adjusted award run queued');
		expect(queued.detail).toMatchObject({
			run: adjusted.id,
			changes: [{ kind: 'move', item: 'IT-2', justification, by: { id: buyer.user.id } }]
		});
		expect(trail.map((e: { action: string }) => e.action)).toContain('run approved');
	});
});
