import type { Knex } from 'knex';
import { insertRevision } from '../src/lib/server/db/bids';
import {
	insertEvent,
	insertInvitation,
	listItems,
	replaceItems,
	setEventState,
	setInvitationTags,
	type EventFields
} from '../src/lib/server/db/events';
import { findOrganisationByName } from '../src/lib/server/db/organisations';
import { appendTrail } from '../src/lib/server/trail';
import { BUYING_ORGANISATION } from './data/demo-accounts';
import {
	packagingBids,
	packagingItems,
	palletBids,
	palletItems,
	uniformItems,
	type DemoBid,
	type DemoItem
} from './data/demo-events';

// The three demo events: one closed with eight bids in, ready to award; one open for bids; and last
// year's pallets event, closed with four bids, which 03_demo_award_journey.ts takes through a run, a
// submission and an approval. Made only when missing, so a second `npm start` keeps whatever was done
// with them.
const CLOSED = 'FP-2027-PKG';
const OPEN = 'FP-2027-PPE';
export const AWARDED = 'FP-2026-PAL';
export const AWARDED_PLAN = 'One supplier at most 60% of each lot';
const DAY = 24 * 3600_000;

async function organisationId(trx: Knex.Transaction, name: string, kind: 'buyer' | 'supplier') {
	const row = await findOrganisationByName(trx, kind, name);
	if (!row) throw new Error(`the demo organisation ${name} is missing: run the seeds in order`);
	return row.id;
}

async function userOf(trx: Knex.Transaction, organisation: string) {
	return (await trx('users').where({ organisation_id: organisation }).orderBy('id').first('id'))!
		.id as number;
}

/** The event as a buyer would make it (db/events.ts), then moved to its demo state. */
async function makeEvent(
	trx: Knex.Transaction,
	organisation: string,
	fields: Omit<
		EventFields,
		'bidValidityDays' | 'allowPriceBreaks' | 'allowCapacity' | 'allowBundles' | 'allowPackSizes'
	> &
		Partial<EventFields>,
	state: Parameters<typeof setEventState>[3] & { state: 'open' | 'closed' },
	items: DemoItem[],
	createdBy: number
): Promise<{ id: string; itemIds: Map<string, string> }> {
	const event = await insertEvent(trx, organisation, createdBy, {
		bidValidityDays: 90,
		allowPriceBreaks: false,
		allowCapacity: false,
		allowBundles: false,
		allowPackSizes: false,
		...fields
	});
	const { state: to, ...extra } = state;
	await setEventState(trx, event.id, to, extra);
	await replaceItems(
		trx,
		event.id,
		items.map((i) => ({
			ref: i.ref,
			description: i.description,
			lot: i.lot,
			quantity: i.quantity,
			unit: i.unit,
			baselineUnitPrice: i.baseline,
			freightPerUnit: null,
			dutyPerUnit: null,
			orderMultiple: null
		}))
	);
	const rows = await listItems(trx, event.id);
	return { id: event.id, itemIds: new Map(rows.map((r) => [r.ref, r.id])) };
}

/** Revision 1 of a supplier's bid, typed on screen, through db/bids.ts as a supplier's would be. */
async function placeBid(
	trx: Knex.Transaction,
	eventId: string,
	itemIds: Map<string, string>,
	bid: DemoBid,
	at: Date
) {
	const supplier = await organisationId(trx, bid.supplier, 'supplier');
	await insertRevision(trx, {
		eventId,
		supplierOrganisationId: supplier,
		source: 'screen',
		uploadId: null,
		submittedBy: await userOf(trx, supplier),
		submittedAt: at,
		bid: {
			capacity: bid.capacity,
			lines: bid.lines.map((l) => ({
				item: l.item,
				unitPrice: l.unitPrice,
				maxQuantity: l.maxQuantity,
				packSize: null,
				priceBreaks: l.breaks.map((b) => ({ fromQuantity: b.from, unitPrice: b.unitPrice }))
			})),
			bundles: bid.bundles
		},
		itemIds
	});
	return supplier;
}

export async function seed(knex: Knex): Promise<void> {
	await knex.transaction(async (trx) => {
		const buying = await organisationId(trx, BUYING_ORGANISATION, 'buyer');
		const buyer = (await trx('users')
			.where({ email: 'buyer@fernhollow.test' })
			.first('id', 'name', 'email'))!;
		const actor = { id: buyer.id as number, name: buyer.name as string, email: buyer.email as string };
		const now = Date.now();

		if (!(await trx('events').where({ organisation_id: buying, reference: CLOSED }).first('id'))) {
			const items = packagingItems();
			const bids = packagingBids(items);
			const deadline = new Date(now - 2 * DAY);
			const { id, itemIds } = await makeEvent(
				trx,
				buying,
				{
					reference: CLOSED,
					title: 'Packaging and consumables 2027',
					description: 'Annual forecast quantities for the North, Harbour and Uplands depots.',
					currency: 'EUR',
					incoterm: 'DAP',
					deliveryPlace: 'North, Harbour and Uplands depots',
					deadline,
					timeZone: 'Europe/Berlin',
					allowPriceBreaks: true,
					allowCapacity: true,
					allowBundles: true
				},
				{
					state: 'closed',
					published_at: new Date(now - 30 * DAY),
					opened_at: deadline,
					opening_record: {
						at: deadline.toISOString(),
						by: 'demo data',
						suppliers: bids.length,
						revisions: bids.length
					}
				},
				items,
				actor.id
			);
			const tags: Record<string, string[]> = {
				'Brackwater Board': ['incumbent'],
				'Linden Reach Hygiene': ['small_business'],
				'Quillmere Films': ['small_business'],
				'Harlow Fen Trading': ['new_entrant']
			};
			for (const [k, bid] of bids.entries()) {
				const supplier = await placeBid(trx, id, itemIds, bid, new Date(now - (20 - k) * DAY));
				await insertInvitation(trx, id, supplier, actor.id);
				if (tags[bid.supplier]) await setInvitationTags(trx, id, supplier, tags[bid.supplier]!);
			}
			await trx('award_plans').insert([
				{ event_id: id, name: 'Lowest cost (no rules)', rules: JSON.stringify([]), lowest_cost: true },
				{
					event_id: id,
					name: 'Dual-source critical items',
					rules: JSON.stringify([
						{ type: 'max_share', scope: { lot: 'L1' }, who: 'each_supplier', percent: 70, basis: 'spend' },
						{ type: 'max_share', scope: { lot: 'L2' }, who: 'each_supplier', percent: 70, basis: 'spend' }
					]),
					created_by: actor.id
				},
				{
					event_id: id,
					name: 'Small-business target',
					rules: JSON.stringify([
						{ type: 'min_share', scope: 'event', who: { tag: 'small_business' }, percent: 15, basis: 'spend' }
					]),
					created_by: actor.id
				},
				{
					event_id: id,
					name: 'Keep it manageable',
					rules: JSON.stringify([
						{ type: 'supplier_count', scope: 'event', max: 4 },
						{ type: 'min_award', scope: 'each_item', who: 'each_supplier', percentOfItem: 10 }
					]),
					created_by: actor.id
				}
			]);
			await appendTrail(trx, {
				eventId: id,
				actor: 'system',
				action: 'demo data loaded',
				detail: { items: items.length, lots: 4, bids: bids.length, state: 'closed' }
			});
		}

		if (!(await trx('events').where({ organisation_id: buying, reference: AWARDED }).first('id'))) {
			const items = palletItems();
			const bids = palletBids(items);
			const deadline = new Date(now - 45 * DAY);
			const { id, itemIds } = await makeEvent(
				trx,
				buying,
				{
					reference: AWARDED,
					title: 'Pallets and strapping 2026',
					description: 'Pallets, strapping and corner boards for the three depots, for 2026.',
					currency: 'EUR',
					incoterm: 'DAP',
					deliveryPlace: 'North, Harbour and Uplands depots',
					deadline,
					timeZone: 'Europe/Berlin'
				},
				{
					state: 'closed',
					published_at: new Date(now - 75 * DAY),
					opened_at: deadline,
					opening_record: {
						at: deadline.toISOString(),
						by: 'demo data',
						suppliers: bids.length,
						revisions: bids.length
					}
				},
				items,
				actor.id
			);
			for (const [k, bid] of bids.entries()) {
				const supplier = await placeBid(trx, id, itemIds, bid, new Date(now - (60 - k) * DAY));
				await insertInvitation(trx, id, supplier, actor.id);
			}
			await trx('award_plans').insert([
				{ event_id: id, name: 'Lowest cost (no rules)', rules: JSON.stringify([]), lowest_cost: true },
				{
					event_id: id,
					name: AWARDED_PLAN,
					rules: JSON.stringify([
						{ type: 'max_share', scope: { lot: 'P1' }, who: 'each_supplier', percent: 60, basis: 'spend' },
						{ type: 'max_share', scope: { lot: 'P2' }, who: 'each_supplier', percent: 60, basis: 'spend' }
					]),
					created_by: actor.id
				}
			]);
			await appendTrail(trx, {
				eventId: id,
				actor: 'system',
				action: 'demo data loaded',
				detail: { items: items.length, lots: 2, bids: bids.length, state: 'closed' }
			});
		}

		if (!(await trx('events').where({ organisation_id: buying, reference: OPEN }).first('id'))) {
			const items = uniformItems();
			const { id, itemIds } = await makeEvent(
				trx,
				buying,
				{
					reference: OPEN,
					title: 'Depot uniforms and PPE 2027',
					description: 'Uniforms and personal protective equipment for depot staff.',
					currency: 'EUR',
					incoterm: 'DDP',
					deliveryPlace: 'Harbour depot',
					deadline: new Date(now + 21 * DAY),
					timeZone: 'Europe/Berlin'
				},
				{ state: 'open', published_at: new Date(now - 5 * DAY) },
				items,
				actor.id
			);
			const invited = [
				'Osk & Vale Supply',
				'Harlow Fen Trading',
				'Sallow Point Industries',
				'Linden Reach Hygiene',
				'Corrow Packaging'
			];
			for (const name of invited)
				await insertInvitation(trx, id, await organisationId(trx, name, 'supplier'), actor.id);
			for (const [k, name] of ['Osk & Vale Supply', 'Sallow Point Industries'].entries()) {
				const bid: DemoBid = {
					supplier: name,
					capacity: null,
					bundles: [],
					lines: items.map((i) => ({
						item: i.ref,
						unitPrice: Math.round(i.baseline * (0.95 + 0.08 * k) * 100) / 100,
						maxQuantity: null,
						breaks: []
					}))
				};
				await placeBid(trx, id, itemIds, bid, new Date(now - (3 - k) * DAY));
			}
			const asker = await organisationId(trx, 'Harlow Fen Trading', 'supplier');
			await trx('questions').insert({
				event_id: id,
				supplier_organisation_id: asker,
				asked_by: await userOf(trx, asker),
				text: 'Can safety boots be offered in half sizes?',
				asked_at: new Date(now - 4 * DAY),
				published_question: 'Can safety boots be offered in half sizes?',
				answer: 'Yes: price the full size; half sizes at the same unit price.',
				answered_by: actor.id,
				answered_at: new Date(now - 3 * DAY)
			});
			await appendTrail(trx, {
				eventId: id,
				actor: 'system',
				action: 'demo data loaded',
				detail: { items: items.length, invited: invited.length, bids: 2, state: 'open' }
			});
		}
	});
}
