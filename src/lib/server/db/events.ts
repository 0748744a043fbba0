// Sourcing events and what belongs to them before bids: lots, items, invitations, amendments and
// clarification questions. Prices are not here: bids are read only through db/bids.ts and its seal.
import type { Db } from './knex';
import type { ItemFields } from '../shapes';

export type EventState =
	'draft' | 'open' | 'closed' | 'in_evaluation' | 'awaiting_signoff' | 'awarded' | 'cancelled';

export interface EventRow {
	id: string;
	organisation_id: string;
	reference: string;
	title: string;
	description: string;
	currency: string;
	incoterm: string;
	delivery_place: string;
	deadline: Date;
	time_zone: string;
	bid_validity_days: number;
	allow_price_breaks: boolean;
	allow_capacity: boolean;
	allow_bundles: boolean;
	allow_pack_sizes: boolean;
	state: EventState;
	published_at: Date | null;
	opened_at: Date | null;
	opening_record: { at: string; by: string; suppliers: number; revisions: number } | null;
	awarded_run_id: string | null;
	created_by: number;
	created_at: Date;
	updated_at: Date;
}

export interface ItemRow {
	id: string;
	event_id: string;
	lot_id: string | null;
	lot_ref: string | null;
	ref: string;
	description: string;
	quantity: string;
	unit: string;
	baseline_unit_price: string | null;
	freight_per_unit: string | null;
	duty_per_unit: string | null;
	order_multiple: string | null;
	position: number;
}

export interface EventFields {
	reference: string;
	title: string;
	description: string;
	currency: string;
	incoterm: string;
	deliveryPlace: string;
	deadline: Date;
	timeZone: string;
	bidValidityDays: number;
	allowPriceBreaks: boolean;
	allowCapacity: boolean;
	allowBundles: boolean;
	allowPackSizes: boolean;
}

export type { ItemFields };

const columnsOf = (f: EventFields) => ({
	reference: f.reference,
	title: f.title,
	description: f.description,
	currency: f.currency,
	incoterm: f.incoterm,
	delivery_place: f.deliveryPlace,
	deadline: f.deadline,
	time_zone: f.timeZone,
	bid_validity_days: f.bidValidityDays,
	allow_price_breaks: f.allowPriceBreaks,
	allow_capacity: f.allowCapacity,
	allow_bundles: f.allowBundles,
	allow_pack_sizes: f.allowPackSizes
});

export async function insertEvent(
	db: Db,
	organisationId: string,
	createdBy: number,
	fields: EventFields
): Promise<EventRow> {
	const [row] = await db<EventRow>('events')
		.insert({ ...columnsOf(fields), organisation_id: organisationId, created_by: createdBy })
		.returning('*');
	return row!;
}

export async function updateEventFields(db: Db, id: string, fields: EventFields): Promise<void> {
	await db('events')
		.where({ id })
		.update({ ...columnsOf(fields), updated_at: db.fn.now() });
}

/** What an amendment may change once the event is published; the deadline only later (enforced by trigger). */
export async function updateAmendedFields(
	db: Db,
	id: string,
	fields: { description: string; deliveryPlace: string; deadline: Date }
): Promise<void> {
	await db('events').where({ id }).update({
		description: fields.description,
		delivery_place: fields.deliveryPlace,
		deadline: fields.deadline,
		updated_at: db.fn.now()
	});
}

export function findEvent(db: Db, id: string): Promise<EventRow | undefined> {
	if (!/^[0-9a-f-]{36}$/i.test(id)) return Promise.resolve(undefined);
	return db<EventRow>('events').where({ id }).first();
}

/** The event locked for the rest of the transaction (FOR UPDATE), so its changes queue behind each other. */
export function lockEvent(db: Db, id: string): Promise<EventRow | undefined> {
	return db<EventRow>('events').where({ id }).forUpdate().first();
}

/**
 * The event held for the rest of the transaction (FOR SHARE): its state cannot change (lockEvent waits)
 * while any number of bids are written beside each other. A state change in flight is waited for, and
 * then its result is what this returns (PostgreSQL re-reads a row it waited for).
 */
export function holdEvent(db: Db, id: string): Promise<EventRow | undefined> {
	return db<EventRow>('events').where({ id }).forShare().first();
}

export function findEventByReference(
	db: Db,
	organisationId: string,
	reference: string
): Promise<EventRow | undefined> {
	return db<EventRow>('events').where({ organisation_id: organisationId, reference }).first();
}

export interface EventSummary extends EventRow {
	items: number;
	invited: number;
}

export function listOrganisationEvents(db: Db, organisationId: string): Promise<EventSummary[]> {
	return db('events as e')
		.where('e.organisation_id', organisationId)
		.select(
			'e.*',
			db.raw('(select count(*)::int from items i where i.event_id = e.id) as items'),
			db.raw('(select count(*)::int from invitations v where v.event_id = e.id) as invited')
		)
		.orderBy('e.created_at', 'desc') as unknown as Promise<EventSummary[]>;
}

/** Events a supplier organisation is invited to, once published: drafts are never shown to suppliers. */
export function listInvitedEvents(db: Db, supplierOrganisationId: string): Promise<EventSummary[]> {
	return db('events as e')
		.join('invitations as v', 'v.event_id', 'e.id')
		.where('v.supplier_organisation_id', supplierOrganisationId)
		.whereNot('e.state', 'draft')
		.select('e.*', db.raw('(select count(*)::int from items i where i.event_id = e.id) as items'))
		.select(db.raw('0 as invited'))
		.orderBy('e.deadline', 'asc') as unknown as Promise<EventSummary[]>;
}

const listItemsQuery = (db: Db, eventId: string) =>
	db('items as i')
		.leftJoin('lots as l', 'l.id', 'i.lot_id')
		.where('i.event_id', eventId)
		.select('i.*', 'l.ref as lot_ref')
		.orderBy('i.position');

/** An event's items in figures, counted in the database (an event page's summary; no item rows read). */
export async function itemFigures(
	db: Db,
	eventId: string
): Promise<{ items: number; lots: number; baselineTotal: number | null }> {
	const row = (await db('items')
		.where({ event_id: eventId })
		.first(
			db.raw('count(*)::int as items'),
			db.raw('count(distinct lot_id)::int as lots'),
			db.raw('sum(quantity * baseline_unit_price)::float8 as baseline_total'),
			db.raw('bool_and(baseline_unit_price is not null) as baseline_known')
		)) as { items: number; lots: number; baseline_total: number | null; baseline_known: boolean | null };
	return {
		items: row.items,
		lots: row.lots,
		baselineTotal: row.items > 0 && row.baseline_known ? row.baseline_total : null
	};
}

export function listItems(db: Db, eventId: string): Promise<ItemRow[]> {
	return listItemsQuery(db, eventId) as unknown as Promise<ItemRow[]>;
}

/** Replaces the event's lots and items in one go (only while the event is a draft). */
export async function replaceItems(db: Db, eventId: string, items: ItemFields[]): Promise<void> {
	await db('items').where({ event_id: eventId }).delete();
	await db('lots').where({ event_id: eventId }).delete();
	const lotRefs = [...new Set(items.map((i) => i.lot).filter((l): l is string => Boolean(l)))];
	const lots = lotRefs.length
		? await db('lots')
				.insert(lotRefs.map((ref) => ({ event_id: eventId, ref, title: ref })))
				.returning(['id', 'ref'])
		: [];
	const lotId = new Map(lots.map((l: { id: string; ref: string }) => [l.ref, l.id]));
	const rows = items.map((item, position) => ({
		event_id: eventId,
		lot_id: item.lot ? lotId.get(item.lot)! : null,
		ref: item.ref,
		description: item.description,
		quantity: item.quantity,
		unit: item.unit,
		baseline_unit_price: item.baselineUnitPrice,
		freight_per_unit: item.freightPerUnit,
		duty_per_unit: item.dutyPerUnit,
		order_multiple: item.orderMultiple,
		position
	}));
	// Chunks keep each statement under PostgreSQL's 65535 bind parameters.
	for (let k = 0; k < rows.length; k += 1000) await db('items').insert(rows.slice(k, k + 1000));
}

export function setEventState(
	db: Db,
	id: string,
	state: EventState,
	extra: Partial<Pick<EventRow, 'published_at' | 'opened_at' | 'opening_record' | 'awarded_run_id'>> = {}
): Promise<number> {
	return db('events')
		.where({ id })
		.update({ state, ...extra, updated_at: db.fn.now() });
}

/** What the opening record counts: the suppliers with a bid revision, and the revisions. */
export async function bidCounts(db: Db, eventId: string): Promise<{ suppliers: number; revisions: number }> {
	const [row] = await db('bid_revisions')
		.where({ event_id: eventId })
		.select(
			db.raw('count(distinct supplier_organisation_id)::int as suppliers'),
			db.raw('count(*)::int as revisions')
		);
	return row as { suppliers: number; revisions: number };
}

export interface InvitationRow {
	id: string;
	event_id: string;
	supplier_organisation_id: string;
	supplier_name: string;
	invited_by: number;
	invited_at: Date;
	tags: string[];
}

export function listInvitations(db: Db, eventId: string): Promise<InvitationRow[]> {
	return db('invitations as v')
		.join('organisations as o', 'o.id', 'v.supplier_organisation_id')
		.where('v.event_id', eventId)
		.select('v.*', 'o.name as supplier_name')
		.orderBy('o.name') as unknown as Promise<InvitationRow[]>;
}

export async function isInvited(db: Db, eventId: string, supplierOrganisationId: string): Promise<boolean> {
	const row = await db('invitations')
		.where({ event_id: eventId, supplier_organisation_id: supplierOrganisationId })
		.first('id');
	return Boolean(row);
}

export async function insertInvitation(
	db: Db,
	eventId: string,
	supplierOrganisationId: string,
	invitedBy: number
): Promise<boolean> {
	const rows = await db('invitations')
		.insert({ event_id: eventId, supplier_organisation_id: supplierOrganisationId, invited_by: invitedBy })
		.onConflict(['event_id', 'supplier_organisation_id'])
		.ignore()
		.returning('id');
	return rows.length > 0;
}

export async function setInvitationTags(
	db: Db,
	eventId: string,
	supplierOrganisationId: string,
	tags: string[]
): Promise<number> {
	return db('invitations')
		.where({ event_id: eventId, supplier_organisation_id: supplierOrganisationId })
		.update({ tags });
}

export async function deleteInvitation(
	db: Db,
	eventId: string,
	supplierOrganisationId: string
): Promise<void> {
	await db('invitations')
		.where({ event_id: eventId, supplier_organisation_id: supplierOrganisationId })
		.delete();
}

/** Active users of the invited supplier organisations: whom event mail goes to. */
export function invitedSupplierUsers(
	db: Db,
	eventId: string
): Promise<{ email: string; name: string | null; organisation_id: string }[]> {
	return db('users as u')
		.join('invitations as v', 'v.supplier_organisation_id', 'u.organisation_id')
		.where('v.event_id', eventId)
		.where('u.role', 'supplier')
		.whereNull('u.deactivated_at')
		.select('u.email', 'u.name', 'u.organisation_id')
		.orderBy('u.email');
}

export interface AmendmentRow {
	id: string;
	event_id: string;
	number: number;
	summary: string;
	detail: Record<string, { before: unknown; after: unknown }>;
	created_by: number;
	created_at: Date;
}

export function listAmendments(db: Db, eventId: string): Promise<AmendmentRow[]> {
	return db<AmendmentRow>('amendments').where({ event_id: eventId }).orderBy('number');
}

export async function insertAmendment(
	db: Db,
	eventId: string,
	summary: string,
	detail: AmendmentRow['detail'],
	createdBy: number
): Promise<AmendmentRow> {
	const [{ next }] = await db('amendments')
		.where({ event_id: eventId })
		.select(db.raw('coalesce(max(number), 0)::int + 1 as next'));
	const [row] = await db<AmendmentRow>('amendments')
		.insert({
			event_id: eventId,
			number: next,
			summary,
			detail: JSON.stringify(detail) as never,
			created_by: createdBy
		})
		.returning('*');
	return row!;
}

export interface QuestionRow {
	id: string;
	event_id: string;
	supplier_organisation_id: string;
	asked_by: number;
	text: string;
	asked_at: Date;
	published_question: string | null;
	answer: string | null;
	answered_by: number | null;
	answered_at: Date | null;
}

/** Every question of the event: for the buying organisation only. */
export function listQuestions(db: Db, eventId: string): Promise<QuestionRow[]> {
	return db<QuestionRow>('questions').where({ event_id: eventId }).orderBy('asked_at');
}

/** What a supplier sees: its own questions, and every answer published to all (without the asker). */
export function listQuestionsForSupplier(
	db: Db,
	eventId: string,
	supplierOrganisationId: string
): Promise<QuestionRow[]> {
	return db<QuestionRow>('questions')
		.where({ event_id: eventId })
		.andWhere((q) => {
			void q.where({ supplier_organisation_id: supplierOrganisationId }).orWhereNotNull('answer');
		})
		.orderBy('asked_at');
}

export async function insertQuestion(
	db: Db,
	eventId: string,
	supplierOrganisationId: string,
	askedBy: number,
	text: string
): Promise<QuestionRow> {
	const [row] = await db<QuestionRow>('questions')
		.insert({ event_id: eventId, supplier_organisation_id: supplierOrganisationId, asked_by: askedBy, text })
		.returning('*');
	return row!;
}

/** One question of an event, locked until the transaction ends (two answers to it then queue). */
export function lockQuestion(db: Db, eventId: string, id: string): Promise<QuestionRow | undefined> {
	return db<QuestionRow>('questions').where({ event_id: eventId, id }).forUpdate().first();
}

export async function answerQuestion(
	db: Db,
	id: string,
	publishedQuestion: string,
	answer: string,
	answeredBy: number,
	at: Date
): Promise<void> {
	await db('questions')
		.where({ id })
		.update({ published_question: publishedQuestion, answer, answered_by: answeredBy, answered_at: at });
}
