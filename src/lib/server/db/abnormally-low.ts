// Abnormally low bids: the buyer's explanation requests (with the answers) and the exclusions of a bid
// line or a whole bid, and the exclusions a run was built without. No prices here.
import type { Db } from './knex';

export interface LowPriceInquiryRow {
	id: string;
	event_id: string;
	supplier_organisation_id: string;
	/** The line asked about; null for the whole bid. */
	item_ref: string | null;
	question: string;
	asked_by: number;
	asked_at: Date;
	answer: string | null;
	answer_recorded_by: number | null;
	answered_at: Date | null;
}

export interface BidExclusionRow {
	id: string;
	event_id: string;
	supplier_organisation_id: string;
	/** The excluded line; null for the whole bid. */
	item_ref: string | null;
	reason: string;
	excluded_by: number;
	excluded_at: Date;
	undo_reason: string | null;
	undone_by: number | null;
	undone_at: Date | null;
}

/** What a run records of an exclusion standing when it started. */
export interface RunExclusion {
	supplier: string;
	/** null: the whole bid. */
	item: string | null;
	reason: string;
	excludedAt: string;
}

export function listInquiries(db: Db, eventId: string): Promise<LowPriceInquiryRow[]> {
	return db<LowPriceInquiryRow>('low_price_inquiries').where({ event_id: eventId }).orderBy('asked_at');
}

export function findInquiry(db: Db, eventId: string, id: string): Promise<LowPriceInquiryRow | undefined> {
	return db<LowPriceInquiryRow>('low_price_inquiries').where({ event_id: eventId, id }).forUpdate().first();
}

export async function insertInquiry(
	db: Db,
	row: Pick<
		LowPriceInquiryRow,
		'event_id' | 'supplier_organisation_id' | 'item_ref' | 'question' | 'asked_by' | 'asked_at'
	>
): Promise<LowPriceInquiryRow> {
	const [inserted] = await db('low_price_inquiries').insert(row).returning('*');
	return inserted as LowPriceInquiryRow;
}

export async function recordAnswer(
	db: Db,
	id: string,
	answer: { answer: string; answer_recorded_by: number; answered_at: Date }
): Promise<void> {
	await db('low_price_inquiries').where({ id }).update(answer);
}

export function listExclusions(db: Db, eventId: string): Promise<BidExclusionRow[]> {
	return db<BidExclusionRow>('bid_exclusions').where({ event_id: eventId }).orderBy('excluded_at');
}

export function standingExclusions(db: Db, eventId: string): Promise<BidExclusionRow[]> {
	return db<BidExclusionRow>('bid_exclusions')
		.where({ event_id: eventId })
		.whereNull('undone_at')
		.orderBy('excluded_at');
}

export function findExclusion(db: Db, eventId: string, id: string): Promise<BidExclusionRow | undefined> {
	return db<BidExclusionRow>('bid_exclusions').where({ event_id: eventId, id }).forUpdate().first();
}

export async function insertExclusion(
	db: Db,
	row: Pick<
		BidExclusionRow,
		'event_id' | 'supplier_organisation_id' | 'item_ref' | 'reason' | 'excluded_by' | 'excluded_at'
	>
): Promise<BidExclusionRow> {
	const [inserted] = await db('bid_exclusions').insert(row).returning('*');
	return inserted as BidExclusionRow;
}

export async function undoExclusion(
	db: Db,
	id: string,
	undo: { undo_reason: string; undone_by: number; undone_at: Date }
): Promise<void> {
	await db('bid_exclusions').where({ id }).whereNull('undone_at').update(undo);
}

/** The exclusions a run's problem was built without (null: none, or a run from before exclusions existed). */
export async function runExclusions(db: Db, runId: string): Promise<RunExclusion[] | null> {
	const row = await db('award_runs').where({ id: runId }).first('excluded');
	return (row?.excluded as RunExclusion[] | null | undefined) ?? null;
}
