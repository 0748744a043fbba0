import type { Db } from './knex';
import type { UserRow } from './tables';
import type { UserWithOrganisation } from './users';

// Kept beside its queries rather than in tables.ts while several streams edit that file; move it there.
export interface UserSessionRow {
	id: string;
	user_id: number;
	created_at: Date;
	last_seen: Date;
	ended_at: Date | null;
	end_reason: string | null;
	user_agent: string | null;
	ip: string | null;
}

export type OpenSession = Pick<UserSessionRow, 'id' | 'created_at' | 'last_seen' | 'user_agent' | 'ip'>;

export async function insertSession(
	db: Db,
	session: { userId: number; userAgent: string | null; ip: string | null }
): Promise<string> {
	const [row] = await db<UserSessionRow>('user_sessions')
		.insert({
			user_id: session.userId,
			user_agent: session.userAgent?.slice(0, 400) ?? null,
			ip: session.ip
		})
		.returning('id');
	return row!.id;
}

// Seen within the idle limit: the cookie's own limit, kept here too so that the row alone decides.
const SEEN_WITHIN = 'last_seen > now() - make_interval(hours => ?)';

/** The session when it belongs to the user, has not ended and has not been idle for longer than the limit. */
export function findOpenSession(
	db: Db,
	id: string,
	userId: number,
	idleHours: number
): Promise<Pick<UserSessionRow, 'id' | 'last_seen'> | undefined> {
	return db<UserSessionRow>('user_sessions')
		.where({ id, user_id: userId })
		.whereNull('ended_at')
		.whereRaw(SEEN_WITHIN, [idleHours])
		.first('id', 'last_seen');
}

/**
 * The user of a session in one query, when the session belongs to the user, has not ended and has not
 * been idle for longer than the limit (as findOpenSession), with the session's last_seen: the check every
 * request makes, one round trip and one pooled connection instead of two.
 */
export function findOpenSessionUser(
	db: Db,
	id: string,
	userId: number,
	idleHours: number
): Promise<(UserWithOrganisation & { session_last_seen: Date }) | undefined> {
	return db<UserRow>('users')
		.join('organisations', 'organisations.id', 'users.organisation_id')
		.join('user_sessions as s', 's.user_id', 'users.id')
		.where('users.id', userId)
		.where('s.id', id)
		.whereNull('s.ended_at')
		.whereRaw(`s.${SEEN_WITHIN}`, [idleHours])
		.first<UserWithOrganisation & { session_last_seen: Date }>(
			'users.*',
			'organisations.name as organisation_name',
			's.last_seen as session_last_seen'
		);
}

export async function touchSession(db: Db, id: string): Promise<void> {
	await db('user_sessions').where({ id }).whereNull('ended_at').update({ last_seen: db.fn.now() });
}

export function listOpenSessions(db: Db, userId: number, idleHours: number): Promise<OpenSession[]> {
	return db<UserSessionRow>('user_sessions')
		.where({ user_id: userId })
		.whereNull('ended_at')
		.whereRaw(SEEN_WITHIN, [idleHours])
		.orderBy('last_seen', 'desc')
		.select('id', 'created_at', 'last_seen', 'user_agent', 'ip');
}

/** Ends the user's open sessions (one of them, or all but one, or all); returns how many ended. */
export async function endSessions(
	db: Db,
	userId: number,
	reason: string,
	which: { only?: string; except?: string | null } = {}
): Promise<number> {
	const query = db('user_sessions').where({ user_id: userId }).whereNull('ended_at');
	if (which.only) query.andWhere('id', which.only);
	if (which.except) query.andWhereNot('id', which.except);
	return query.update({ ended_at: db.fn.now(), end_reason: reason });
}
