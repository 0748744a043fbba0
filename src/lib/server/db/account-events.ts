import type { Db } from './knex';

export interface AccountEvent {
	actorUserId: number | null;
	subjectUserId: number | null;
	action:
		| 'user.invited'
		| 'user.role_changed'
		| 'user.deactivated'
		| 'user.reactivated'
		| 'user.password_set'
		| 'user.sessions_ended';
	detail?: Record<string, unknown>;
	ip?: string | null;
}

/** Appends to the account log; the table's trigger refuses any update or delete. */
export async function recordAccountEvent(db: Db, event: AccountEvent): Promise<void> {
	await db('account_events').insert({
		actor_user_id: event.actorUserId,
		subject_user_id: event.subjectUserId,
		action: event.action,
		detail: JSON.stringify(event.detail ?? {}),
		ip: event.ip ?? null
	});
}
