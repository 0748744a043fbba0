import { recordAccountEvent } from '../db/account-events';
import type { Db } from '../db/knex';
import { endSessions } from '../db/sessions';

export type SessionEndReason =
	| 'signed out'
	| 'signed out everywhere'
	| 'password changed'
	| 'deactivated'
	| 'reactivated'
	| 'role changed';

export interface SessionEnding {
	userId: number;
	reason: SessionEndReason;
	actorUserId: number | null;
	ip?: string | null;
	/** End only this session (sign-out). */
	only?: string;
	/** End all but this one (the session that changed the password). */
	except?: string | null;
}

/**
 * Ends sessions for good: the session cookie of an ended session is refused at its next request,
 * whoever holds a copy of it. Noted in the account log when any session ended.
 */
export async function endUserSessions(db: Db, ending: SessionEnding): Promise<number> {
	const count = await endSessions(db, ending.userId, ending.reason, {
		only: ending.only,
		except: ending.except
	});
	if (count > 0) {
		await recordAccountEvent(db, {
			actorUserId: ending.actorUserId,
			subjectUserId: ending.userId,
			action: 'user.sessions_ended',
			detail: { reason: ending.reason, count },
			ip: ending.ip ?? null
		});
	}
	return count;
}
