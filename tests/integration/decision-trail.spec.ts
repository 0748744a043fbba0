import knex from 'knex';
import { afterAll, describe, expect, it } from 'vitest';
import { databaseOwnerUrl } from '../support/env';
import { closeTestDb, testDb } from '../support/factories';
import {
	aSignedInUser,
	aSupplierOrganisationWithUser,
	anOpenEvent,
	fillSheet,
	signedIn,
	uploadSheet
} from '../support/events';

// The role that owns the tables: the only one that may disable the trail's trigger.
const owner = knex({ client: 'pg', connection: databaseOwnerUrl(), pool: { min: 0, max: 2 } });

afterAll(async () => {
	await closeTestDb();
	await owner.destroy();
});

async function anEventWithATrail() {
	const buyer = await aSignedInUser('buyer');
	const { organisation, user } = await aSupplierOrganisationWithUser();
	const supplier = await signedIn(user);
	const event = await anOpenEvent({ createdBy: buyer.user.id, invite: [organisation.id] });
	const sheet = Buffer.from(await (await supplier.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer());
	expect((await uploadSheet(supplier, event.id, await fillSheet(sheet, { 'IT-1': ['cheap'] }))).status).toBe(
		422
	);
	expect((await uploadSheet(supplier, event.id, await fillSheet(sheet, { 'IT-1': [2] }))).status).toBe(201);
	expect((await uploadSheet(supplier, event.id, await fillSheet(sheet, { 'IT-1': [1.9] }))).status).toBe(201);
	return { buyer, supplier, event };
}

const trailOf = async (client: Awaited<ReturnType<typeof aSignedInUser>>['client'], id: string) =>
	(await (await client.get(`/api/events/${id}/trail`, 'application/json')).json()) as {
		verification: {
			intact: boolean;
			entries: number;
			firstBroken?: number;
			unanchored: number;
			text: string;
		};
		entries: { seq: number; action: string; detail: Record<string, unknown> }[];
	};

describe('the decision trail', () => {
	it('records uploads rejected and accepted, chained, and verifies the chain intact', async () => {
		const { buyer, event } = await anEventWithATrail();
		const trail = await trailOf(buyer.client, event.id);
		expect(trail.entries.map((e) => e.action)).toEqual([
			'upload rejected',
			'upload accepted',
			'upload accepted'
		]);
		expect(trail.verification).toMatchObject({ intact: true, entries: 3, unsigned: 0 });
		expect(trail.verification.text).toMatch(/^intact, 3 entries/);
		// The trail is readable before the deadline: it holds hashes and counts, never a price.
		expect(JSON.stringify(trail)).not.toMatch(/"1\.9"|1\.9[,}]/);
		const page = await (await buyer.client.get(`/events/${event.id}/trail`)).text();
		expect(page).toContain('The chain is intact: 3 entries');
		// The page says plainly what the check finds and what it cannot, and no longer claims more.
		expect(page).toContain('What it cannot find');
		expect(page).toContain('a step that was never written to the trail');
		expect(page).not.toContain('cannot be changed or removed');
	});

	it("refuses UPDATE and DELETE on trail rows: to the app's role by its grants, to the owner by the trigger", async () => {
		const { event } = await anEventWithATrail();
		await expect(
			testDb()('trail_entries').where({ event_id: event.id }).update({ action: 'x' })
		).rejects.toThrow(/permission denied/);
		await expect(testDb()('trail_entries').where({ event_id: event.id }).delete()).rejects.toThrow(
			/permission denied/
		);
		await expect(
			owner('trail_entries').where({ event_id: event.id }).update({ action: 'x' })
		).rejects.toThrow(/append-only/);
		await expect(owner('trail_entries').where({ event_id: event.id }).delete()).rejects.toThrow(
			/append-only/
		);
	});

	it('finds a row changed directly in SQL by the owner, with the trigger disabled', async () => {
		const { buyer, event } = await anEventWithATrail();
		await owner.transaction(async (trx) => {
			await trx.raw('alter table trail_entries disable trigger trail_entries_no_change');
			await trx('trail_entries')
				.where({ event_id: event.id, seq: 2 })
				.update({ detail: JSON.stringify({ supplier: 'someone else', revision: 1 }) });
			await trx.raw('alter table trail_entries enable trigger trail_entries_no_change');
		});
		const trail = await trailOf(buyer.client, event.id);
		expect(trail.verification).toMatchObject({ intact: false, entries: 3, firstBroken: 2 });
		expect(trail.verification.text).toBe('broken at entry 2: entry 2 was changed after it was written');
	});

	it('is for the buying organisation: suppliers are refused, auditors read it', async () => {
		const { supplier, event } = await anEventWithATrail();
		expect((await supplier.get(`/api/events/${event.id}/trail`, 'application/json')).status).toBe(403);
		const auditor = await aSignedInUser('auditor');
		expect((await trailOf(auditor.client, event.id)).verification.intact).toBe(true);
		const xlsx = await auditor.client.get(`/api/events/${event.id}/trail?format=xlsx`);
		expect(xlsx.headers.get('content-type')).toContain('spreadsheetml');
	});
});
