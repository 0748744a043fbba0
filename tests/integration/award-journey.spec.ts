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
import { latestMailTo, mailTo } from '../support/mail';
import { mailApi } from '../support/env';
import { finished, post } from '../support/runs';

afterAll(closeTestDb);

type Party = { user: TestUser; client: Browserless; organisationId: string; name: string };
const json = async (response: Response) => (await response.json()) as Record<string, unknown>;

async function aBidder(): Promise<Party> {
	const { organisation, user } = await aSupplierOrganisationWithUser();
	return { user, client: await signedIn(user), organisationId: organisation.id, name: organisation.name };
}

let buyer: { user: TestUser; client: Browserless };
let approver: { user: TestUser; client: Browserless };
let a: Party;
let b: Party;
let event: TestEvent;

beforeAll(async () => {
	[buyer, approver, a, b] = await Promise.all([
		aSignedInUser('buyer'),
		aSignedInUser('approver'),
		aBidder(),
		aBidder()
	]);
	const deadline = new Date(Date.now() + 15_000);
	event = await anOpenEvent({
		createdBy: buyer.user.id,
		invite: [a.organisationId, b.organisationId],
		deadline
	});
	await testDb()('items').where({ event_id: event.id, ref: 'IT-1' }).update({ freight_per_unit: 0.5 });
	for (const [who, prices] of [
		[a, [4, 5, 6]],
		[b, [4.2, 4.9, 6.5]]
	] as const) {
		const sheet = Buffer.from(
			await (await who.client.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer()
		);
		const filled = await fillSheet(sheet, { 'IT-1': [prices[0]], 'IT-2': [prices[1]], 'IT-3': [prices[2]] });
		expect((await uploadSheet(who.client, event.id, filled)).status).toBe(201);
	}
	// A published deadline can only move later, even in SQL: the test lets it pass.
	await untilPast(deadline);
}, 60_000);

describe('award plans, runs, sign-off and notices', () => {
	let lowestRun: string;

	it('solves the lowest-cost plan in a worker process at landed cost, hashed and repeatable', async () => {
		const plans = (await json(await buyer.client.get(`/api/events/${event.id}/plans`, 'application/json')))
			.plans as {
			id: string;
			lowestCost: boolean;
		}[];
		const lowest = plans.find((p) => p.lowestCost)!;
		const started = await post(buyer.client, `/api/plans/${lowest.id}/runs`, {});
		expect(started.status).toBe(202);
		lowestRun = (await json(started)).runId as string;
		const run = await finished(buyer.client, lowestRun);
		expect(run.status).toBe('done');
		const result = run.result as {
			status: string;
			totalCost: number;
			awards: { supplier: string; item: string; quantity: number }[];
		};
		expect(result.status).toBe('optimal');
		// IT-1: A 4 + 0.5 freight = 4.5 vs B 4.7; IT-2: B 4.9; IT-3: A 6. Quantities 100, 200, 300.
		expect(result.totalCost).toBeCloseTo(100 * 4.5 + 200 * 4.9 + 300 * 6, 6);
		expect(result.awards.map((l) => `${l.item}:${l.supplier === a.name ? 'A' : 'B'}`)).toEqual([
			'IT-1:A',
			'IT-2:B',
			'IT-3:A'
		]);
		expect(run.problemSha256).toMatch(/^[0-9a-f]{64}$/);

		const again = await finished(
			buyer.client,
			(await json(await post(buyer.client, `/api/plans/${lowest.id}/runs`, {}))).runId as string
		);
		expect(again.problemSha256).toBe(run.problemSha256);
		expect(again.resultSha256).toBe(run.resultSha256);
	});

	it('sends the run page its summary first and the allocation a page at a time, filtered and sorted on the server', async () => {
		const summary = await json(
			await buyer.client.get(`/api/runs/${lowestRun}?summary=1`, 'application/json')
		);
		expect(summary.allocationLines).toBe(3);
		expect((summary.result as { awards: unknown[]; totalCost: number }).awards).toEqual([]);
		// The problem's items and bids stay on the server unless asked for (?problem=1).
		expect(summary).not.toHaveProperty('problem');
		expect(summary.currency).toBe('EUR');
		const withProblem = await json(
			await buyer.client.get(`/api/runs/${lowestRun}?problem=1`, 'application/json')
		);
		const problem = withProblem.problem as { items: { ref: string }[]; bids: unknown[] };
		expect(problem.items.map((i) => i.ref)).toEqual(['IT-1', 'IT-2', 'IT-3']);
		expect(problem.bids.length).toBeGreaterThan(0);
		expect((summary.result as { totalCost: number }).totalCost).toBeCloseTo(
			100 * 4.5 + 200 * 4.9 + 300 * 6,
			6
		);

		type Page = { total: number; offset: number; limit: number; lines: { item: string; cost: number }[] };
		const page = async (query: string) =>
			(await json(
				await buyer.client.get(`/api/runs/${lowestRun}/lines?${query}`, 'application/json')
			)) as Page;
		// Costs from the first test: IT-3 300 x 6 = 1,800; IT-2 200 x 4.9 = 980; IT-1 100 x 4.5 = 450.
		const byCost = await page('sort=cost&limit=2');
		expect(byCost.total).toBe(3);
		expect(byCost.lines.map((l) => l.item)).toEqual(['IT-3', 'IT-2']);
		expect((await page('sort=cost&limit=2&offset=2')).lines.map((l) => l.item)).toEqual(['IT-1']);
		expect((await page('filter=it-2')).lines.map((l) => l.item)).toEqual(['IT-2']);
		expect((await page('filter=nothing-like-this')).total).toBe(0);
		// A hostile page size is bounded, a nonsense offset starts at the first line.
		const bounded = await page('limit=100000&offset=-5');
		expect([bounded.limit, bounded.offset, bounded.lines.length]).toEqual([500, 0, 3]);

		// A supplier never reads the buyer's allocation, not even a page of it.
		const refused = await a.client.get(`/api/runs/${lowestRun}/lines`, 'application/json');
		expect([403, 404]).toContain(refused.status);
	});

	it('refuses at save a plan that names an item, lot or supplier the event lacks, by the rule’s number', async () => {
		const name = 'Names nobody';
		const bad = await post(buyer.client, `/api/events/${event.id}/plans`, {
			name,
			rules: [
				{ type: 'max_share', scope: 'each_item', who: 'each_supplier', percent: 60 },
				{ type: 'max_share', scope: { item: 'NO-SUCH-ITEM' }, who: 'each_supplier', percent: 60 },
				{ type: 'exclude', scope: 'event', who: { supplier: 'Nobody Trading' } },
				{ type: 'max_share', scope: { lot: 'L9' }, who: 'each_supplier', percent: 50 }
			]
		});
		expect(bad.status).toBe(422);
		const message = String((await json(bad)).message);
		expect(message).toContain('Rule 2 (scope.item): this event has no item “NO-SUCH-ITEM”');
		expect(message).toContain('Rule 3 (who.supplier): “Nobody Trading” is not invited to this event');
		expect(message).toContain('Rule 4 (scope.lot): this event has no lot “L9”');
		expect(message).not.toContain('Rule 1');
		expect(await testDb()('award_plans').where({ event_id: event.id, name }).first()).toBeUndefined();
	});

	it('refuses a plan with a bad rule, naming it, and runs a plan with a share cap', async () => {
		const bad = await post(buyer.client, `/api/events/${event.id}/plans`, {
			name: 'Broken',
			rules: [{ type: 'max_share', scope: 'each_item', who: 'each_supplier', percent: 160 }]
		});
		expect(bad.status).toBe(422);
		expect(JSON.stringify(await bad.json())).toContain('Rule 1 (percent)');
		const made = await post(buyer.client, `/api/events/${event.id}/plans`, {
			name: 'Dual sourcing',
			rules: [{ type: 'max_share', scope: 'each_item', who: 'each_supplier', percent: 60 }]
		});
		expect(made.status).toBe(201);
		const plan = (await json(made)).plan as { id: string; preview: string[] };
		expect(plan.preview).toEqual(['No supplier gets more than 60% of any item']);
		const run = await finished(
			buyer.client,
			(await json(await post(buyer.client, `/api/plans/${plan.id}/runs`, {}))).runId as string
		);
		const result = run.result as {
			awards: { item: string; quantity: number }[];
			ruleCosts: { cost: number }[];
		};
		expect(
			result.awards
				.filter((l) => l.item === 'IT-1')
				.map((l) => l.quantity)
				.sort()
		).toEqual([40, 60]);
		expect(result.ruleCosts[0]!.cost).toBeGreaterThan(0);

		const exported = await buyer.client.get(`/api/runs/${run.id as string}/export`);
		expect(exported.headers.get('content-type')).toContain('spreadsheetml');
		const compared = await buyer.client.get(
			`/buyer/events/${event.id}/award/compare?run=${lowestRun}&run=${run.id as string}`
		);
		expect(compared.status).toBe(200);
		const page = await compared.text();
		// Under the 60% cap every item is split; under the lowest-cost run none is.
		expect(page).toContain('Items allocated differently');
		expect(page.match(/<th scope="row"[^>]*>IT-\d<\/th>/g)).toHaveLength(3);
	});

	it('applies a rule on tagged suppliers once the buyer has tagged them', async () => {
		const tagged = await buyer.client.request(`/buyer/events/${event.id}/suppliers?/tags`, {
			method: 'POST',
			body: new URLSearchParams({ supplierOrganisationId: b.organisationId, tags: 'small_business' }),
			accept: 'application/json'
		});
		expect(tagged.status).toBe(200);
		expect(JSON.stringify(await tagged.json())).toContain('Tags saved: small_business.');
		const made = await post(buyer.client, `/api/events/${event.id}/plans`, {
			name: 'Small-business target',
			rules: [
				{ type: 'min_share', scope: 'event', who: { tag: 'small_business' }, percent: 50, basis: 'spend' }
			]
		});
		const plan = (await json(made)).plan as { id: string; preview: string[] };
		expect(plan.preview).toEqual([
			'Suppliers tagged “small_business” together get at least 50% of the spend of the whole event'
		]);
		const started = await json(await post(buyer.client, `/api/plans/${plan.id}/runs`, {}));
		expect(started.status, JSON.stringify(started)).toBe('queued');
		const run = await finished(buyer.client, started.runId as string);
		const result = run.result as { totalCost: number; supplierTotals: { supplier: string; cost: number }[] };
		const share = result.supplierTotals.find((t) => t.supplier === b.name)!.cost / result.totalCost;
		expect(share).toBeGreaterThanOrEqual(0.5 - 1e-9);
	});

	it('keeps the author from approving, returns to evaluation on a plan change, and approves for someone else', async () => {
		const unjustified = await post(buyer.client, `/api/runs/${lowestRun}/submit`, {
			justification: ' too short '
		});
		expect(unjustified.status).toBe(422);
		const refusal = await json(unjustified);
		expect(refusal.field).toBe('justification');
		expect(refusal.message).toMatch(/^justification: /);
		expect((await testDb()('signoffs').where({ run_id: lowestRun })).length).toBe(0);
		const submitted = await post(buyer.client, `/api/runs/${lowestRun}/submit`, {
			justification: 'The lowest landed cost, and both suppliers keep a share.'
		});
		expect((await json(submitted)).state).toBe('awaiting_signoff');
		// The buyer who submitted now holds the approver role: still the author, still refused.
		await testDb()('users').where({ id: buyer.user.id }).update({ role: 'approver' });
		const own = await post(buyer.client, `/api/runs/${lowestRun}/decision`, {
			decision: 'approve',
			comment: 'mine'
		});
		expect(own.status).toBe(403);
		expect((await json(own)).message).toMatch(/author/);
		await testDb()('users').where({ id: buyer.user.id }).update({ role: 'buyer' });

		const plans = (await json(await buyer.client.get(`/api/events/${event.id}/plans`, 'application/json')))
			.plans as { id: string; name: string }[];
		const dual = plans.find((p) => p.name === 'Dual sourcing')!;
		const change = await buyer.client.request(`/buyer/events/${event.id}/award?/savePlan`, {
			method: 'POST',
			body: new URLSearchParams({
				planId: dual.id,
				name: 'Dual sourcing',
				rules: JSON.stringify([{ type: 'max_share', scope: 'each_item', who: 'each_supplier', percent: 70 }])
			}),
			accept: 'application/json'
		});
		expect(change.status).toBe(200);
		expect((await testDb()('events').where({ id: event.id }).first()).state).toBe('in_evaluation');
		const late = await post(approver.client, `/api/runs/${lowestRun}/decision`, {
			decision: 'approve',
			comment: ''
		});
		expect(late.status).toBe(409);

		await post(buyer.client, `/api/runs/${lowestRun}/submit`, {
			justification: 'Submitted again after the plan change; the lowest landed cost.'
		});
		// B's relay is down when the notices go out; they arrive once it is back.
		await fetch(`${mailApi()}/outages/${encodeURIComponent(b.user.email)}`, { method: 'PUT' });
		const approvedAfter = new Date();
		const approved = await post(approver.client, `/api/runs/${lowestRun}/decision`, {
			decision: 'approve',
			comment: 'Agreed.'
		});
		expect(approved.status).toBe(200);
		expect((await json(approved)).notices).toBe(2);
		// The approver's home keeps the decision (issue 13: the approver had no history).
		const home = (await (await approver.client.get('/approver')).text())
			.replace(/<!--[\s\S]*?-->/g, '')
			.replace(/<[^>]+>/g, '')
			.replace(/\s+/g, ' ');
		expect(home).toContain('Your decisions');
		expect(home).toMatch(new RegExp(`${event.reference} · [^:]+: run \\d+ \\(.*?\\), approved \\d{4}-`));

		const award = await latestMailTo(a.user.email, { after: approvedAfter, timeoutMs: 20_000 });
		expect(award.subject).toMatch(/^Award notice/);
		expect(award.text).toContain('IT-1: 100 at 4.50 EUR = 450.00 EUR');
		expect(award.text).toContain('IT-3: 300 at 6.00 EUR = 1,800.00 EUR');
		expect(award.text).not.toContain('IT-2');
		expect(award.text).not.toContain(b.name);
		expect(award.attachments.map((x) => x.filename)).toEqual([`award-${event.reference}.xlsx`]);
		// The default standstill rule: 10 calendar days from dispatch (common practice; confirm locally).
		const ends = new Date(approvedAfter.getTime() + 10 * 24 * 3600_000).toISOString().slice(0, 10);
		expect(award.text).toContain(`The standstill period ends on ${ends} (confirm with local rules)`);

		await new Promise((r) => setTimeout(r, 3000));
		expect((await mailTo(b.user.email)).filter((m) => /Award notice|Result of/.test(m.subject))).toEqual([]);
		const waiting = await testDb()('notices')
			.where({ run_id: lowestRun, supplier_organisation_id: b.organisationId })
			.first();
		expect(waiting.status).toBe('queued');
		expect(waiting.attempts).toBeGreaterThan(0);
		await fetch(`${mailApi()}/outages/${encodeURIComponent(b.user.email)}`, { method: 'DELETE' });
		const later = await latestMailTo(b.user.email, { after: approvedAfter, timeoutMs: 60_000 });
		expect(later.subject).toMatch(/^Award notice/);
		expect(later.text).toContain('IT-2: 200 at 4.90 EUR = 980.00 EUR');
		expect(later.text).not.toContain(a.name);

		const mine = await json(await a.client.get(`/api/events/${event.id}/my-result`, 'application/json'));
		expect(mine).toMatchObject({
			status: 'awarded',
			lines: [
				{ item: 'IT-1', quantity: 100 },
				{ item: 'IT-3', quantity: 300 }
			]
		});
		expect(JSON.stringify(mine)).not.toContain(b.name);
		const trail = await json(await buyer.client.get(`/api/events/${event.id}/trail`, 'application/json'));
		expect((trail.verification as { intact: boolean }).intact).toBe(true);
		expect(JSON.stringify(trail)).toContain('run approved');
	});
});
