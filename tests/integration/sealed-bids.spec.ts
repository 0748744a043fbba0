import { afterAll, describe, expect, it } from 'vitest';
import {
	aUser,
	anOrganisation,
	closeTestDb,
	testDb,
	theBuyingOrganisation,
	unique
} from '../support/factories';

afterAll(closeTestDb);

// The seal lives in the database (migrations/20261201233000_sourcing_events_and_bids.ts): prices are read
// through sealed_bid_lines(event, viewer organisation, now).
async function anEventWithTwoBids(deadline: Date) {
	const db = testDb();
	const buyer = await aUser('buyer');
	const buying = await theBuyingOrganisation();
	const [event] = await db('events')
		.insert({
			organisation_id: buying.id,
			reference: unique('EV'),
			title: 'Sealed',
			currency: 'EUR',
			incoterm: 'DAP',
			deadline,
			created_by: buyer.id,
			state: 'open'
		})
		.returning('id');
	const [item] = await db('items')
		.insert({ event_id: event.id, ref: 'IT-1', quantity: 100, unit: 'C62', position: 1 })
		.returning('id');
	const suppliers = [await anOrganisation('supplier'), await anOrganisation('supplier')];
	for (const [k, supplier] of suppliers.entries()) {
		const user = await aUser('supplier', { organisationId: supplier.id });
		const [revision] = await db('bid_revisions')
			.insert({
				event_id: event.id,
				supplier_organisation_id: supplier.id,
				number: 1,
				source: 'screen',
				submitted_by: user.id
			})
			.returning('id');
		await db('bid_lines').insert({ revision_id: revision.id, item_id: item.id, unit_price: 3.5 + k });
	}
	return { eventId: event.id as string, buying, suppliers };
}

const read = async (eventId: string, viewer: string, now: Date) =>
	(
		await testDb().raw('select supplier_organisation_id, unit_price from sealed_bid_lines(?, ?, ?)', [
			eventId,
			viewer,
			now
		])
	).rows as {
		supplier_organisation_id: string;
		unit_price: string;
	}[];

describe('sealed bids in the database', () => {
	const deadline = new Date('2030-01-01T12:00:00Z');
	const before = new Date('2030-01-01T11:59:59Z');

	it('shows the buying organisation no price before the deadline', async () => {
		const { eventId, buying } = await anEventWithTwoBids(deadline);
		expect(await read(eventId, buying.id, before)).toEqual([]);
	});

	it('shows the buying organisation every price once the deadline has passed', async () => {
		const { eventId, buying } = await anEventWithTwoBids(deadline);
		const rows = await read(eventId, buying.id, deadline);
		expect(rows.map((r) => Number(r.unit_price)).sort()).toEqual([3.5, 4.5]);
	});

	it('shows a supplier its own prices and never another supplier’s, before or after the deadline', async () => {
		const { eventId, suppliers } = await anEventWithTwoBids(deadline);
		for (const moment of [before, deadline]) {
			const rows = await read(eventId, suppliers[0]!.id, moment);
			expect(rows).toEqual([{ supplier_organisation_id: suppliers[0]!.id, unit_price: '3.500000' }]);
		}
	});

	it('gates every revision (and so its price breaks and bundles) through visible_bid_revisions', async () => {
		const { eventId, buying, suppliers } = await anEventWithTwoBids(deadline);
		const revisions = async (viewer: string, now: Date) =>
			(
				await testDb().raw('select supplier_organisation_id from visible_bid_revisions(?, ?, ?)', [
					eventId,
					viewer,
					now
				])
			).rows.map((r: { supplier_organisation_id: string }) => r.supplier_organisation_id);
		expect(await revisions(buying.id, before)).toEqual([]);
		expect((await revisions(buying.id, deadline)).sort()).toEqual(suppliers.map((s) => s.id).sort());
		expect(await revisions(suppliers[1]!.id, before)).toEqual([suppliers[1]!.id]);
		const stranger = await anOrganisation('supplier');
		expect(await revisions(stranger.id, deadline)).toEqual([]);
	});

	it('keeps prices as numeric, never floating point', async () => {
		const { rows } = await testDb().raw(
			`select data_type from information_schema.columns where table_name in ('bid_lines', 'price_breaks', 'items', 'bundle_offers') and column_name in ('unit_price', 'quantity', 'price', 'from_quantity', 'max_quantity')`
		);
		expect(new Set(rows.map((r: { data_type: string }) => r.data_type))).toEqual(new Set(['numeric']));
	});
});
