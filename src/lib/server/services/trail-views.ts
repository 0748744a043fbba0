import type { SessionUser } from '../auth/session-user';
import { db } from '../db/knex';
import { listTrail, trailWorkbook, verifyTrail } from '../trail';
import { RuleViolation } from './errors';
import { eventFor } from './events';

/** The trail of an event and whether its chain holds: for staff of the buying organisation only. */
export async function eventTrail(user: SessionUser, id: string) {
	const { event, view } = await eventFor(user, id);
	if (view !== 'staff')
		throw new RuleViolation('The decision trail is for the buying organisation.', undefined, 403);
	const entries = await listTrail(db(), id);
	return { event, entries, verification: verifyTrail(entries) };
}

export async function eventTrailJson(user: SessionUser, id: string) {
	const { event, entries, verification } = await eventTrail(user, id);
	return {
		event: { id: event.id, reference: event.reference, title: event.title },
		verification,
		entries: entries.map((e) => ({
			seq: e.seq,
			at: e.at.toISOString(),
			actor: e.actor,
			action: e.action,
			detail: e.detail,
			previousHash: e.previous_hash,
			hash: e.hash
		}))
	};
}

export async function eventTrailXlsx(user: SessionUser, id: string) {
	const { event, entries, verification } = await eventTrail(user, id);
	return { body: await trailWorkbook(event.reference, entries, verification), reference: event.reference };
}
