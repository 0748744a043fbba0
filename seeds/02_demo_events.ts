import type { Knex } from 'knex';
import { appendTrail } from '../src/lib/server/trail';
import { BUYING_ORGANISATION } from './data/demo-accounts';
import { packagingBids, packagingItems, uniformItems, type DemoBid, type DemoItem } from './data/demo-events';

// The two demo events: one closed with eight bids in, ready to award, and one open for bids. Made only
// when missing, so a second `npm start` keeps whatever was done with them.
const CLOSED = 'FP-2027-PKG';
const OPEN = 'FP-2027-PPE';
const DAY = 24 * 3600_000;

async function organisationId(trx: Knex.Transaction, name: string, kind: 'buyer' | 'supplier') {
	const row = await trx('organisations')
		.whereRaw('kind = ? and lower(name) = lower(?)', [kind, name])
		.first('id');
	if (!row) throw new Error(`the demo organisation ${name} is missing: run the seeds in order`);
	return row.id as string;
}

async function userOf(trx: Knex.Transaction, organisation: string) {
	return (await trx('users').where({ organisation_id: organisation }).orderBy('id').first('id'))!
		.id as number;
}

async function makeEvent(
	trx: Knex.Transaction,
	fields: Record<string, unknown>,
	items: DemoItem[],
	createdBy: number
): Promise<{ id: string; itemIds: Map<string, string> }> {
	const [event] = await trx('events')
		.insert({ ...fields, created_by: createdBy })
		.returning('id');
	const lots = [...new Set(items.map((i) => i.lot))];
	const lotRows = await trx('lots')
		.insert(lots.map((ref) => ({ event_id: event.id, ref, title: ref })))
		.returning(['id', 'ref']);
	const lotId = new Map(lotRows.map((l: { id: string; ref: string }) => [l.ref, l.id]));
	const rows = await trx('items')
		.insert(
			items.map((i, position) => ({
				event_id: event.id,
				lot_id: lotId.get(i.lot),
				ref: i.ref,
				description: i.description,
				quantity: i.quantity,
				unit: i.unit,
				baseline_unit_price: i.baseline,
				position
			}))
		)
		.returning(['id', 'ref']);
	return { id: event.id, itemIds: new Map(rows.map((r: { id: string; ref: string }) => [r.ref, r.id])) };
}

async function placeBid(
	trx: Knex.Transaction,
	eventId: string,
	itemIds: Map<string, string>,
	bid: DemoBid,
	at: Date
) {
	const supplier = await organisationId(trx, bid.supplier, 'supplier');
	const [revision] = await trx('bid_revisions')
		.insert({
			event_id: eventId,
			supplier_organisation_id: supplier,
			number: 1,
			source: 'screen',
			capacity: bid.capacity,
			submitted_by: await userOf(trx, supplier),
			submitted_at: at
		})
		.returning('id');
	const lines = await trx('bid_lines')
		.insert(
			bid.lines.map((l) => ({
				revision_id: revision.id,
				item_id: itemIds.get(l.item),
				unit_price: l.unitPrice,
				max_quantity: l.maxQuantity
			}))
		)
		.returning(['id', 'item_id']);
	const lineOf = new Map(lines.map((l: { id: string; item_id: string }) => [l.item_id, l.id]));
	const breaks = bid.lines.flatMap((l) =>
		l.breaks.map((b) => ({
			bid_line_id: lineOf.get(itemIds.get(l.item)!),
			from_quantity: b.from,
			unit_price: b.unitPrice
		}))
	);
	if (breaks.length) await trx('price_breaks').insert(breaks);
	for (const bundle of bid.bundles) {
		const [offer] = await trx('bundle_offers')
			.insert({ revision_id: revision.id, ref: bundle.ref, price: bundle.price })
			.returning('id');
		await trx('bundle_offer_items').insert(
			bundle.items.map((i) => ({
				bundle_offer_id: offer.id,
				item_id: itemIds.get(i.item),
				quantity: i.quantity
			}))
		);
	}
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
				{
					organisation_id: buying,
					reference: CLOSED,
					title: 'Packaging and consumables 2027',
					description: 'Annual forecast quantities for the North, Harbour and Uplands depots.',
					currency: 'EUR',
					incoterm: 'DAP',
					delivery_place: 'North, Harbour and Uplands depots',
					deadline,
					time_zone: 'Europe/Berlin',
					allow_price_breaks: true,
					allow_capacity: true,
					allow_bundles: true,
					state: 'closed',
					published_at: new Date(now - 30 * DAY),
					opened_at: deadline,
					opening_record: JSON.stringify({
						at: deadline.toISOString(),
						by: 'demo data',
						suppliers: bids.length,
						revisions: bids.length
					})
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
				await trx('invitations').insert({
					event_id: id,
					supplier_organisation_id: supplier,
					invited_by: actor.id,
					tags: tags[bid.supplier] ?? []
				});
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

		if (!(await trx('events').where({ organisation_id: buying, reference: OPEN }).first('id'))) {
			const items = uniformItems();
			const { id, itemIds } = await makeEvent(
				trx,
				{
					organisation_id: buying,
					reference: OPEN,
					title: 'Depot uniforms and PPE 2027',
					description: 'Uniforms and personal protective equipment for depot staff.',
					currency: 'EUR',
					incoterm: 'DDP',
					delivery_place: 'Harbour depot',
					deadline: new Date(now + 21 * DAY),
					time_zone: 'Europe/Berlin',
					state: 'open',
					published_at: new Date(now - 5 * DAY)
				},
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
				await trx('invitations').insert({
					event_id: id,
					supplier_organisation_id: await organisationId(trx, name, 'supplier'),
					invited_by: actor.id
				});
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
