// Whole units and pack sizes through the whole product: the buyer's order multiple on an item, a
// supplier's pack sizes in its bid sheet, and the award run that keeps both. Figures worked by hand
// beside each check.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browserless } from '../support/http';
import { closeTestDb, testDb } from '../support/factories';
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

type Party = { client: Browserless; name: string };
const json = async (response: Response) => (await response.json()) as Record<string, unknown>;

async function aBidder(): Promise<Party> {
	const { organisation, user } = await aSupplierOrganisationWithUser();
	return { client: await signedIn(user), name: organisation.name };
}

async function sheetOf(who: Party, eventId: string): Promise<Buffer> {
	return Buffer.from(await (await who.client.get(`/api/events/${eventId}/bid-sheet`)).arrayBuffer());
}

let buyer: Awaited<ReturnType<typeof aSignedInUser>>;
let a: Party;
let b: Party;
let event: TestEvent;

beforeAll(async () => {
	[buyer, a, b] = await Promise.all([aSignedInUser('buyer'), aBidder(), aBidder()]);
	const deadline = new Date(Date.now() + 15_000);
	const ids = await Promise.all(
		[a, b].map(
			async (p) => (await testDb()('organisations').where({ name: p.name }).first('id')).id as string
		)
	);
	event = await anOpenEvent({ createdBy: buyer.user.id, invite: ids, deadline, allowPackSizes: true });
	// IT-1: 100 pieces (C62); IT-2: 200 pieces ordered in multiples of 4; IT-3: 300.5 kg.
	await testDb()('items').where({ event_id: event.id, ref: 'IT-2' }).update({ order_multiple: 4 });
	await testDb()('items').where({ event_id: event.id, ref: 'IT-3' }).update({ unit: 'KGM', quantity: 300.5 });
}, 60_000);

describe('whole units and pack sizes in a sourcing event', () => {
	it('refuses a pack size in parts of a counted unit, naming the cell', async () => {
		const filled = await fillSheet(await sheetOf(a, event.id), { 'IT-1': [4, 1.5] });
		const answer = await uploadSheet(a.client, event.id, filled);
		expect(answer.status).toBe(422);
		const body = await json(answer);
		expect(body.problems).toEqual([
			{
				sheet: 'Prices',
				row: 2,
				column: 'G',
				message: '1.5 is not a whole number, and C62 is counted in whole units'
			}
		]);
	});

	it('awards whole packs, whole multiples and parts of a measured item at least cost', async () => {
		// A sells IT-1 in packs of 12 and IT-2 in packs of 6; B sells single pieces.
		const forA = await fillSheet(await sheetOf(a, event.id), {
			'IT-1': [4, 12],
			'IT-2': [5, 6],
			'IT-3': [6]
		});
		const forB = await fillSheet(await sheetOf(b, event.id), { 'IT-1': [4.5], 'IT-2': [5.5], 'IT-3': [6.5] });
		expect((await uploadSheet(a.client, event.id, forA)).status).toBe(201);
		expect((await uploadSheet(b.client, event.id, forB)).status).toBe(201);
		const own = (await json(await a.client.get(`/api/events/${event.id}/bids`, 'application/json'))) as {
			bids: { lines: { item: string; packSize: number | null }[] }[];
		};
		expect(own.bids[0]!.lines.map((l) => [l.item, l.packSize])).toEqual([
			['IT-1', 12],
			['IT-2', 6],
			['IT-3', null]
		]);

		const deadline = await testDb()('events').where({ id: event.id }).first('deadline');
		await untilPast(new Date(deadline.deadline));
		const plans = (await json(await buyer.client.get(`/api/events/${event.id}/plans`, 'application/json')))
			.plans as { id: string; lowestCost: boolean }[];
		const started = await post(buyer.client, `/api/plans/${plans.find((p) => p.lowestCost)!.id}/runs`, {});
		expect(started.status).toBe(202);
		const run = await finished(buyer.client, (await json(started)).runId as string);
		expect(run.status).toBe('done');
		const result = run.result as {
			status: string;
			totalCost: number;
			violations: string[];
			awards: { supplier: string; item: string; quantity: number }[];
		};
		expect(result.status).toBe('optimal');
		expect(result.violations).toEqual([]);
		// IT-1: 8 packs of 12 from A (96 x 4.00 = 384.00) and 4 pieces from B (4 x 4.50 = 18.00) = 402.00;
		// 9 packs (108 x 4.00 = 432.00) would cost more.
		// IT-2: A moves in 12s (order multiple 4, packs of 6), B in 4s: 192 from A (960.00) and 8 from B
		// (44.00) = 1,004.00; 204 from A would be 1,020.00, 180 + 20 would be 1,010.00.
		// IT-3: 300.5 kg from A at 6.00 = 1,803.00. Total 3,209.00.
		const by = (l: { supplier: string }) => (l.supplier === a.name ? 'A' : 'B');
		// Sorted here: the engine orders a row's suppliers by name, and the test's names are random.
		expect(result.awards.map((l) => `${l.item} ${by(l)} ${l.quantity}`).sort()).toEqual([
			'IT-1 A 96',
			'IT-1 B 4',
			'IT-2 A 192',
			'IT-2 B 8',
			'IT-3 A 300.5'
		]);
		expect(result.totalCost).toBeCloseTo(3209, 6);
	});
});
