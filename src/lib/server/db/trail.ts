// The decision trail's SQL: the table the app may only append to and read. The hashing, MAC and
// verification are in trail.ts.
import type { Db } from './knex';

/** A trail entry as stored (hashes and MAC as fixed-width text; trail.ts trims them). */
export interface TrailRow {
	event_id: string;
	seq: number;
	at: Date;
	actor_user_id: number | null;
	actor: string;
	action: string;
	detail: Record<string, unknown>;
	previous_hash: string | null;
	hash: string;
	/** HMAC-SHA256 of the hash; null only on entries written before entries were signed. */
	mac: string | null;
	mac_key_id: string | null;
}

/** Holds the event's chain until the transaction ends, so concurrent appends queue rather than fork it. */
export async function lockTrailChain(trx: Db, eventId: string): Promise<void> {
	await trx.raw('select pg_advisory_xact_lock(hashtext(?))', [`trail:${eventId}`]);
}

/** The newest entry's number and hash, or undefined for an empty trail. */
export function lastTrailEntry(db: Db, eventId: string): Promise<{ seq: number; hash: string } | undefined> {
	return db('trail_entries').where({ event_id: eventId }).orderBy('seq', 'desc').first('seq', 'hash');
}

export async function insertTrailEntry(db: Db, row: TrailRow): Promise<void> {
	await db('trail_entries').insert({ ...row, detail: JSON.stringify(row.detail) });
}

export function listTrailRows(db: Db, eventId: string): Promise<TrailRow[]> {
	return db('trail_entries').where({ event_id: eventId }).orderBy('seq');
}

/** The newest entry of one action in an event's trail, with the current name of the user who made it. */
export function latestTrailAction(
	db: Db,
	eventId: string,
	action: string
): Promise<(Pick<TrailRow, 'at' | 'actor' | 'detail'> & { actor_name: string | null }) | undefined> {
	return db('trail_entries as t')
		.leftJoin('users as u', 'u.id', 't.actor_user_id')
		.where({ 't.event_id': eventId, 't.action': action })
		.orderBy('t.seq', 'desc')
		.first('t.at', 't.actor', 't.detail', 'u.name as actor_name');
}
