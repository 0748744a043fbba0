// A second round of bids (issue 14, section 4): the buyer invites some bidders to revise with their own
// rank as feedback; revised bids stay sealed from the buying side until the round's deadline (in the
// database, visible_bid_revisions); a run after it uses the revised prices and says it used round 2; the
// Bids tab shows each supplier's change between the rounds; the trail records the round.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { formatMoney, formatMoneyChange } from '../../src/lib/format';
import { toLocalInput } from '../../src/lib/time';
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
import { closeTestDb, testDb } from '../support/factories';
import { textOf } from '../support/html';
import type { Browserless } from '../support/http';
import { latestMailTo } from '../support/mail';
import { finished, post } from '../support/runs';
import { sheetRows } from '../support/workbook';

afterAll(closeTestDb);

type Supplier = Awaited<ReturnType<typeof aSupplierOrganisationWithUser>> & { client: Browserless };
let buyer: { client: Browserless; user: { id: number } };
let a: Supplier, b: Supplier, c: Supplier;
let event: TestEvent;
const deadline = new Date(Date.now() + 12_000);
let roundDeadline: Date;
/** A finished run on round 1's bids, made before round 2 started. */
let roundOneRun: string;
/** A run on round 2's bids. */
let roundTwoRun: string;

const json = async (response: Response) => (await response.json()) as Record<string, unknown>;

async function bid(supplier: Supplier, prices: [number, number]) {
	const sheet = Buffer.from(
		await (await supplier.client.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer()
	);
	const filled = await fillSheet(sheet, { 'IT-1': [prices[0]], 'IT-2': [prices[1]] });
	return uploadSheet(supplier.client, event.id, filled);
}

/** What the buyer's API gives as A's current unit prices, by item. */
async function buyerSeesPricesOf(supplier: Supplier) {
	const { bids } = (await json(
		await buyer.client.get(`/api/events/${event.id}/bids`, 'application/json')
	)) as {
		bids: { supplierOrganisationId: string; round: number; lines: { item: string; unitPrice: number }[] }[];
	};
	const own = bids.find((x) => x.supplierOrganisationId === supplier.organisation.id)!;
	return { round: own.round, prices: own.lines.map((l) => l.unitPrice) };
}

/** Rounds of revisions the database lets the buying organisation read now (visible_bid_revisions). */
async function roundsVisibleToBuyer(): Promise<number[]> {
	const rows = (
		await testDb().raw(
			'select round from visible_bid_revisions(?, (select organisation_id from events where id = ?), now())',
			[event.id, event.id]
		)
	).rows as { round: number }[];
	return [...new Set(rows.map((r) => r.round))].sort();
}

beforeAll(async () => {
	buyer = await aSignedInUser('buyer');
	const orgs = await Promise.all([1, 2, 3].map(() => aSupplierOrganisationWithUser()));
	event = await anOpenEvent({
		createdBy: buyer.user.id,
		invite: orgs.map((o) => o.organisation.id),
		items: 2,
		deadline
	});
	[a, b, c] = (await Promise.all(orgs.map(async (o) => ({ ...o, client: await signedIn(o.user) })))) as [
		Supplier,
		Supplier,
		Supplier
	];
	// IT-1's baseline 13.50: the abnormally-low screen flags a price below 0.7 × 13.50 = 9.45
	// (src/lib/abnormally-low.ts), so A's 9 of round 2 is flagged and its 10 of round 1 is not.
	await testDb()('items').where({ event_id: event.id, ref: 'IT-1' }).update({ baseline_unit_price: 13.5 });
	// Round 1. IT-1 (100 units): A 10, B 11, C 12. IT-2 (200 units): A 20, B 19, C 25.
	for (const [supplier, prices] of [
		[a, [10, 20]],
		[b, [11, 19]],
		[c, [12, 25]]
	] as const)
		expect((await bid(supplier, [...prices])).status).toBe(201);
	await untilPast(deadline);
}, 60_000);

describe('a second round of bids', () => {
	it('refuses a round without a supplier or with a deadline in the past, naming the field', async () => {
		const future = new Date(Date.now() + 3_600_000).toISOString();
		const none = await post(buyer.client, `/api/events/${event.id}/rounds`, {
			suppliers: [],
			deadline: future,
			feedback: 'rank'
		});
		expect(none.status).toBe(422);
		expect(await json(none)).toMatchObject({
			field: 'suppliers',
			message: 'Choose at least one supplier to invite to the new round.'
		});
		// The page's form takes the wall-clock time in the event's zone (Europe/Berlin in the fixture).
		const past = await buyer.client.postForm(
			`/buyer/events/${event.id}/bids?/round`,
			{
				suppliers: a.organisation.id,
				deadlineLocal: toLocalInput(new Date(Date.now() - 3_600_000), 'Europe/Berlin'),
				feedback: 'rank'
			},
			'application/json'
		);
		const refused = JSON.stringify(await past.json());
		expect(refused).toContain('deadlineLocal');
		expect(refused).toContain('The round’s deadline must be in the future');
		expect(await testDb()('bid_rounds').where({ event_id: event.id })).toEqual([]);
	});

	it('runs on round 1 before a second round starts', async () => {
		const { plans } = (await json(
			await buyer.client.get(`/api/events/${event.id}/plans`, 'application/json')
		)) as { plans: { id: string; lowestCost: boolean }[] };
		const started = await post(buyer.client, `/api/plans/${plans.find((p) => p.lowestCost)!.id}/runs`, {});
		roundOneRun = ((await json(started)) as { runId: string }).runId;
		const run = (await finished(buyer.client, roundOneRun, 120_000)) as { round: number; status: string };
		expect(run).toMatchObject({ round: 1, status: 'done' });
	}, 150_000);

	it('gives each invited supplier only its own rank, on its page, in the API and by mail', async () => {
		roundDeadline = new Date(Date.now() + 9_000);
		const started = await post(buyer.client, `/api/events/${event.id}/rounds`, {
			suppliers: [a.organisation.id, b.organisation.id],
			deadline: roundDeadline.toISOString(),
			feedback: 'rank',
			per: 'item'
		});
		expect(started.status).toBe(201);
		expect(((await json(started)).round as { number: number }).number).toBe(2);
		// By hand from round 1: IT-1 A 10 < B 11 < C 12, so A 1st; IT-2 B 19 < A 20 < C 25, so A 2nd.
		const mine = (await json(await a.client.get(`/api/events/${event.id}/rounds`, 'application/json'))) as {
			rounds: { number: number; open: boolean; lines: string[] }[];
		};
		expect(mine.rounds).toMatchObject([
			{
				number: 2,
				open: true,
				lines: ['Item IT-1: 1st: your price is the lowest', 'Item IT-2: 2nd lowest price']
			}
		]);
		const answer = JSON.stringify(mine);
		// Exactly these lines: never another supplier's price, nor how many bid ("2nd", never "2nd of 3").
		for (const other of [b.organisation.name, c.organisation.name, ' of 3', 'unitPrice'])
			expect(answer).not.toContain(other);
		const page = textOf(await (await a.client.get(`/supplier/events/${event.id}`)).text());
		expect(page).toContain('Round 2');
		expect(page).toContain('IT-2: 2nd lowest price');
		expect(page).not.toContain(b.organisation.name);
		const mail = await latestMailTo(a.user.email, { subject: /^Round 2 of bids/ });
		expect(mail.text).toContain('Item IT-1: 1st: your price is the lowest');
		expect(mail.text).not.toContain(b.organisation.name);
		// C is not invited: it sees no round and cannot bid.
		expect(
			((await json(await c.client.get(`/api/events/${event.id}/rounds`, 'application/json'))).rounds as [])
				.length
		).toBe(0);
		expect((await bid(c, [1, 1])).status).toBe(409);
	});

	it('keeps the revised bid sealed from the buyer until the round’s deadline, then opens it', async () => {
		expect((await bid(a, [9, 18])).status).toBe(201);
		expect(await buyerSeesPricesOf(a)).toEqual({ round: 1, prices: [10, 20] });
		expect(await roundsVisibleToBuyer()).toEqual([1]);
		expect(textOf(await (await buyer.client.get(`/buyer/events/${event.id}/bids`)).text())).toContain(
			'Round 2 open until'
		);
		// A sees its own revision at once.
		const own = (await json(await a.client.get(`/api/events/${event.id}/bids`, 'application/json'))) as {
			bids: { round: number }[];
		};
		expect(own.bids[0]!.round).toBe(2);
		// No award while suppliers are still revising: the run on round 1 cannot go to sign-off now.
		const submit = () =>
			post(buyer.client, `/api/runs/${roundOneRun}/submit`, { justification: 'Cheapest on round 1.' });
		const early = await submit();
		expect(early.status).toBe(409);
		expect(JSON.stringify(await json(early))).toContain('Round 2 is open for bids until');
		await untilPast(roundDeadline);
		// Nor once round 2 has opened: the run was built on bids that are superseded now.
		const stale = await submit();
		expect(stale.status).toBe(409);
		expect(JSON.stringify(await json(stale))).toContain(
			"This run used the bids of round 1; round 2's bids are open now."
		);
		expect((await bid(a, [8, 17])).status).toBe(409);
		expect(await buyerSeesPricesOf(a)).toEqual({ round: 2, prices: [9, 18] });
		expect(await buyerSeesPricesOf(b)).toEqual({ round: 1, prices: [11, 19] });
		expect(await roundsVisibleToBuyer()).toEqual([1, 2]);
	}, 30_000);

	it('shows each supplier’s change between the rounds on the Bids tab', async () => {
		const text = textOf(await (await buyer.client.get(`/buyer/events/${event.id}/bids`)).text());
		expect(text).toContain('Change from round 1 to round 2');
		// By hand: A 10 × 100 + 20 × 200 = 5,000 in round 1, 9 × 100 + 18 × 200 = 4,500 in round 2, −500
		// (−10.0%); B did not revise: 11 × 100 + 19 × 200 = 4,900 in both.
		const money = (v: number) => formatMoney(v, 'EUR');
		expect(text).toContain(
			`${a.organisation.name} ${money(5000)} ${money(4500)} ${formatMoneyChange(-500, 'EUR')} (−10.0%)`
		);
		expect(text).toContain(`${b.organisation.name} (did not revise) ${money(4900)} ${money(4900)}`);

		// The workbook gives both rounds' totals and the change (the same figures by hand).
		const download = await buyer.client.get(`/api/events/${event.id}/tabulation?format=xlsx`);
		const rows = new Map(
			(await sheetRows(download, 'Suppliers')).map((r) => [String(r.values.Supplier), r.values])
		);
		const figures = (name: string) => {
			const row = rows.get(name)!;
			return [
				row['Total at its prices (EUR)'],
				row['Total in round 1 (EUR)'],
				row['Change since round 1 (EUR)']
			];
		};
		expect(figures(a.organisation.name)).toEqual([4500, 5000, -500]);
		expect(figures(b.organisation.name)).toEqual([4900, 4900, 0]);
	});

	it('runs on round 2 with the revised prices, and the trail records the round', async () => {
		const { plans } = (await json(
			await buyer.client.get(`/api/events/${event.id}/plans`, 'application/json')
		)) as {
			plans: { id: string; lowestCost: boolean }[];
		};
		const started = await post(buyer.client, `/api/plans/${plans.find((p) => p.lowestCost)!.id}/runs`, {});
		const { runId } = (await json(started)) as { runId: string };
		roundTwoRun = runId;
		const run = (await json(await buyer.client.get(`/api/runs/${runId}?problem=1`, 'application/json'))) as {
			round: number;
			problem: { bids: { supplier: string; item: string; unitPrice: number }[] };
		};
		expect(run.round).toBe(2);
		const priceOf = (who: Supplier, item: string) =>
			run.problem.bids.find((x) => x.supplier === who.organisation.name && x.item === item)?.unitPrice;
		expect([priceOf(a, 'IT-1'), priceOf(a, 'IT-2')]).toEqual([9, 18]);
		expect([priceOf(b, 'IT-1'), priceOf(b, 'IT-2')]).toEqual([11, 19]);
		expect(priceOf(c, 'IT-1')).toBe(12);
		const { entries } = (await json(
			await buyer.client.get(`/api/events/${event.id}/trail`, 'application/json')
		)) as {
			entries: { action: string; detail: Record<string, unknown> }[];
		};
		expect(entries.find((e) => e.action === 'round 2 started')?.detail).toMatchObject({
			round: 2,
			feedback: 'rank',
			per: 'item',
			deadline: roundDeadline.toISOString(),
			invited: [a.organisation.name, b.organisation.name].sort()
		});
		expect(entries.find((e) => e.action === 'round 2 bids opened')?.detail).toMatchObject({
			round: 2,
			suppliers: 1,
			revisions: 1
		});
		expect(entries.find((e) => e.action === 'award run queued' && e.detail.run === runId)?.detail.round).toBe(
			2
		);
	});

	it('screens each run’s own round for abnormally low prices', async () => {
		await finished(buyer.client, roundTwoRun, 120_000);
		const runPage = async (runId: string) =>
			textOf(await (await buyer.client.get(`/buyer/events/${event.id}/award/runs/${runId}`)).text());
		// Both runs award IT-1 to A (round 1: 10 against 11 and 12; round 2: 9 against 11 and 12).
		const flag = `${a.organisation.name}, line IT-1:`;
		expect(await runPage(roundTwoRun)).toContain(flag);
		expect(await runPage(roundOneRun)).not.toContain(flag);
	}, 150_000);
});
