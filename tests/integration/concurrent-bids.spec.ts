import { setTimeout as sleep } from 'node:timers/promises';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeTestDb, testDb } from '../support/factories';
import {
	aSignedInUser,
	aSupplierOrganisationWithUser,
	anOpenEvent,
	fillSheet,
	signedIn,
	uploadSheet,
	type TestEvent
} from '../support/events';
import type { Browserless } from '../support/http';

// Bids of different suppliers to one event are written beside each other: each holds the event row
// FOR SHARE (db/events.ts holdEvent), so the event's state cannot change under it, and only the trail's
// append at the end goes one at a time. Before, each took the row FOR UPDATE and 40 suppliers uploading
// at once queued behind each other for the whole of their writes (bench:pages, DEVELOPERS.md).

afterAll(closeTestDb);

let event: TestEvent;
let suppliers: { client: Browserless; organisationId: string }[];

beforeAll(async () => {
	const buyer = await aSignedInUser('buyer');
	const made = await Promise.all([aSupplierOrganisationWithUser(), aSupplierOrganisationWithUser()]);
	suppliers = await Promise.all(
		made.map(async ({ organisation, user }) => ({
			client: await signedIn(user),
			organisationId: organisation.id
		}))
	);
	event = await anOpenEvent({ createdBy: buyer.user.id, invite: suppliers.map((s) => s.organisationId) });
});

async function filledSheet(client: Browserless, price: number): Promise<Buffer> {
	const sheet = Buffer.from(await (await client.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer());
	return fillSheet(sheet, { 'IT-1': [price], 'IT-2': [price + 1], 'IT-3': [price + 2] });
}

describe('bids written at the same time', () => {
	it('accepts an upload while another bid to the same event is being written', async () => {
		const [a] = suppliers;
		const sheet = await filledSheet(a!.client, 4.25);
		// Another supplier's bid in the middle of being written holds the event row FOR SHARE until it commits.
		const other = await testDb().transaction();
		try {
			await other.raw('select id from events where id = ? for share', [event.id]);
			const answer = await Promise.race([
				uploadSheet(a!.client, event.id, sheet).then((response) => response.status),
				sleep(15_000).then(() => 'still waiting after 15 s')
			]);
			expect(answer).toBe(201);
		} finally {
			await other.commit();
		}
	});

	it('numbers one supplier’s revisions in turn when two of its uploads arrive at once', async () => {
		const [, b] = suppliers;
		const sheets = await Promise.all([filledSheet(b!.client, 5), filledSheet(b!.client, 6)]);
		const statuses = await Promise.all(sheets.map((sheet) => uploadSheet(b!.client, event.id, sheet)));
		expect(statuses.map((response) => response.status)).toEqual([201, 201]);
		const numbers = await testDb()('bid_revisions')
			.where({ event_id: event.id, supplier_organisation_id: b!.organisationId })
			.orderBy('number')
			.pluck('number');
		expect(numbers).toEqual([1, 2]);
	});
});
