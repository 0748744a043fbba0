// The figures at the top of every tab of a buyer's event (the layout's summary cards): who has bid out of
// who is invited (a withdrawn bid not counted), the baseline's total, and the cheapest finished run. Before
// the deadline only names and times are behind these figures (the seal: DEVELOPERS.md).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { formatMoney } from '../../src/lib/format';
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
import type { Browserless } from '../support/http';
import { finished, post } from '../support/runs';
import { textOf } from '../support/html';

afterAll(closeTestDb);

let buyer: { client: Browserless; user: { id: number } };
let bidders: Awaited<ReturnType<typeof aSupplierOrganisationWithUser>>[];
let event: TestEvent;
const deadline = new Date(Date.now() + 8_000);

async function bid(k: number, prices: number[]) {
	const client = await signedIn(bidders[k]!.user);
	const sheet = Buffer.from(await (await client.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer());
	const filled = await fillSheet(sheet, { 'IT-1': [prices[0]!], 'IT-2': [prices[1]!], 'IT-3': [prices[2]!] });
	expect((await uploadSheet(client, event.id, filled)).status).toBe(201);
	return client;
}
const summaryText = async () => {
	const response = await buyer.client.get(`/buyer/events/${event.id}`);
	expect(response.status).toBe(200);
	return textOf(await response.text());
};

beforeAll(async () => {
	buyer = await aSignedInUser('buyer');
	bidders = await Promise.all([1, 2, 3].map(() => aSupplierOrganisationWithUser()));
	event = await anOpenEvent({
		createdBy: buyer.user.id,
		invite: bidders.map((b) => b.organisation.id),
		deadline
	});
	// Baseline prices 2, 3 and 4 on quantities 100, 200 and 300: 200 + 600 + 1,200 = 2,000 (by hand).
	for (const [ref, price] of [
		['IT-1', 2],
		['IT-2', 3],
		['IT-3', 4]
	] as const)
		await testDb()('items').where({ event_id: event.id, ref }).update({ baseline_unit_price: price });
});

describe('the summary of a buyer’s event', () => {
	it('counts who has bid out of who is invited, not a withdrawn bid, and totals the baseline', async () => {
		expect(await summaryText()).toContain('Suppliers who have bid 0 of 3');
		await bid(0, [4, 5, 6]);
		const second = await bid(1, [4.5, 4.8, 6.2]);
		expect(await summaryText()).toContain('Suppliers who have bid 2 of 3');
		await bid(2, [5, 5, 5]);
		const withdrawal = await second.postForm(
			`/supplier/events/${event.id}?/withdraw`,
			{},
			'application/json'
		);
		expect(withdrawal.status).toBe(200);
		const text = await summaryText();
		expect(text).toContain('Suppliers who have bid 2 of 3');
		expect(text).toContain(`Baseline total (EUR) ${formatMoney(2000, 'EUR')}`);
		expect(text).toContain('Cheapest run so far (EUR) — no run yet');
	});

	it('shows the cheapest finished run once bids are opened and runs are made', async () => {
		await untilPast(deadline);
		const plans = (await (
			await buyer.client.get(`/api/events/${event.id}/plans`, 'application/json')
		).json()) as {
			plans: { id: string; lowestCost: boolean }[];
		};
		const started = (await (
			await post(buyer.client, `/api/plans/${plans.plans.find((p) => p.lowestCost)!.id}/runs`, {})
		).json()) as { runId: string };
		await finished(buyer.client, started.runId, 120_000);
		// Lowest price per item among the two current bids (first: 4, 5, 6; third: 5, 5, 5):
		// 100 × 4 + 200 × 5 + 300 × 5 = 2,900 (by hand; the second supplier withdrew).
		expect(await summaryText()).toContain(
			`Cheapest run so far (EUR) ${formatMoney(2900, 'EUR')} run 1 of 1 finished run`
		);
	}, 150_000);
});
