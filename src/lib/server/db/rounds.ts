// Rounds of bids after the opening (round 1 is the bidding up to the event's deadline, and has no row):
// the round, who is invited to it and each invited supplier's own feedback.
import type { FeedbackEntry, FeedbackKind, FeedbackPer } from '../../round-feedback';
import type { Db } from './knex';

export interface RoundRow {
	id: string;
	event_id: string;
	number: number;
	deadline: Date;
	feedback: FeedbackKind;
	feedback_per: FeedbackPer;
	started_by: number;
	started_at: Date;
	opened_at: Date | null;
}

export interface RoundSupplierRow {
	round_id: string;
	supplier_organisation_id: string;
	supplier_name: string;
	feedback: FeedbackEntry[];
}

export function listRounds(db: Db, eventId: string): Promise<RoundRow[]> {
	return db<RoundRow>('bid_rounds').where({ event_id: eventId }).orderBy('number');
}

export async function insertRound(
	db: Db,
	round: Omit<RoundRow, 'id' | 'opened_at'>,
	suppliers: { supplierOrganisationId: string; feedback: FeedbackEntry[] }[]
): Promise<RoundRow> {
	const [row] = await db<RoundRow>('bid_rounds').insert(round).returning('*');
	await db('bid_round_suppliers').insert(
		suppliers.map((s) => ({
			round_id: row!.id,
			supplier_organisation_id: s.supplierOrganisationId,
			feedback: JSON.stringify(s.feedback)
		}))
	);
	return row!;
}

/** Who is invited to the rounds of an event (no feedback: for the buyer's pages and the trail). */
export function listRoundSuppliers(db: Db, eventId: string): Promise<Omit<RoundSupplierRow, 'feedback'>[]> {
	return db('bid_round_suppliers as s')
		.join('bid_rounds as r', 'r.id', 's.round_id')
		.join('organisations as o', 'o.id', 's.supplier_organisation_id')
		.where('r.event_id', eventId)
		.orderBy('o.name')
		.select('s.round_id', 's.supplier_organisation_id', 'o.name as supplier_name');
}

/** One supplier's own invitations to the rounds of an event, with its own feedback. */
export function ownRoundInvitations(
	db: Db,
	eventId: string,
	supplierOrganisationId: string
): Promise<(RoundRow & { own_feedback: FeedbackEntry[] })[]> {
	return db('bid_rounds as r')
		.join('bid_round_suppliers as s', 's.round_id', 'r.id')
		.where({ 'r.event_id': eventId, 's.supplier_organisation_id': supplierOrganisationId })
		.orderBy('r.number')
		.select('r.*', 's.feedback as own_feedback');
}

/** Rounds whose deadline has passed but whose opening is not yet recorded, locked for recording it. */
export function lockDueRounds(db: Db, eventId: string, at: Date): Promise<RoundRow[]> {
	return db<RoundRow>('bid_rounds')
		.where({ event_id: eventId })
		.whereNull('opened_at')
		.andWhere('deadline', '<=', at)
		.orderBy('number')
		.forUpdate();
}

export async function hasDueRound(db: Db, eventId: string, at: Date): Promise<boolean> {
	const row = await db('bid_rounds')
		.where({ event_id: eventId })
		.whereNull('opened_at')
		.andWhere('deadline', '<=', at)
		.first('id');
	return row !== undefined;
}

export async function markRoundOpened(db: Db, id: string, at: Date): Promise<void> {
	await db('bid_rounds').where({ id }).update({ opened_at: at });
}

/** How many suppliers revised, and how many revisions, in one round: counted at its opening, no price. */
export async function roundBidCounts(
	db: Db,
	eventId: string,
	round: number
): Promise<{ suppliers: number; revisions: number }> {
	const [row] = await db('bid_revisions')
		.where({ event_id: eventId, round })
		.select(
			db.raw('count(distinct supplier_organisation_id)::int as suppliers'),
			db.raw('count(*)::int as revisions')
		);
	return row as { suppliers: number; revisions: number };
}

/** The commitments and salts of the uploads answered during a round: revealed at its opening. */
export function roundUploadCommitments(
	db: Db,
	eventId: string,
	round: Pick<RoundRow, 'started_at' | 'deadline'>
): Promise<{ id: string; commitment: string | null; commitment_salt: string | null }[]> {
	return db('uploads')
		.where({ event_id: eventId })
		.whereIn('status', ['accepted', 'rejected'])
		.whereNotNull('commitment')
		.andWhere('received_at', '>=', round.started_at)
		.andWhere('received_at', '<=', round.deadline)
		.orderBy('received_at')
		.select('id', 'commitment', 'commitment_salt');
}
