// Before the deadline: which invited suppliers have bid (never a price, a file or anything read from
// one), and a reminder by e-mail to those that have not. A reminder tells a supplier only about its own
// missing bid: it names no other supplier and says nothing of how many have bid.
import type { SessionUser } from '../auth/session-user';
import { now } from '../clock';
import { listSubmissions } from '../db/bids';
import { invitedSupplierUsers, listInvitations, lockEvent, type EventRow } from '../db/events';
import { db, type Db } from '../db/knex';
import { latestTrailAction } from '../db/trail';
import { enqueueMail } from '../jobs/queue';
import { bidReminderMail } from '../mail/templates';
import { appendTrail } from '../trail';
import { RuleViolation } from './errors';
import { buyerEvent, buyerName, effectiveState, eventFor, eventMail } from './events';
import type { RequestContext } from './users';
import { formatInZone } from '$lib/time';

/**
 * At most one reminder per event an hour, so suppliers are not flooded by a buyer who clicks again (a
 * common practice, not a rule from a source). The time of the last one is read from the decision trail,
 * which records every reminder anyway: a second copy of it could disagree with the trail.
 */
export const REMINDER_INTERVAL_MS = 60 * 60_000;

const REMINDER_ACTION = 'reminder sent';

export interface InvitedSupplierStatus {
	organisationId: string;
	name: string;
	/** `withdrawn`: the latest revision withdrew the bid; `no_bid`: no revision at all. */
	status: 'bid' | 'withdrawn' | 'no_bid';
	revisions: number;
	latestAt: Date | null;
}

export interface LastReminder {
	at: Date;
	byName: string;
	suppliers: number;
}

export interface BidStatus {
	/** While the event accepts bids: reminders can be sent only then. */
	open: boolean;
	/** The event's time zone, in which its pages show times. */
	timeZone: string;
	invited: InvitedSupplierStatus[];
	lastReminder: LastReminder | null;
}

/** Every invited supplier by name and whether its latest revision is a bid, a withdrawal or missing. */
async function invitedWithBids(from: Db, eventId: string): Promise<InvitedSupplierStatus[]> {
	const invitations = await listInvitations(from, eventId);
	const submitted = new Map(
		(await listSubmissions(from, eventId)).map((s) => [s.supplier_organisation_id, s])
	);
	return invitations.map((invitation) => {
		const latest = submitted.get(invitation.supplier_organisation_id);
		return {
			organisationId: invitation.supplier_organisation_id,
			name: invitation.supplier_name,
			status: !latest ? 'no_bid' : latest.latest_source === 'withdrawal' ? 'withdrawn' : 'bid',
			revisions: latest?.revisions ?? 0,
			latestAt: latest?.latest_at ?? null
		};
	});
}

async function lastReminder(from: Db, eventId: string): Promise<LastReminder | null> {
	const entry = await latestTrailAction(from, eventId, REMINDER_ACTION);
	if (!entry) return null;
	const suppliers = entry.detail.suppliers;
	return {
		at: entry.at,
		byName: entry.actor_name ?? entry.actor,
		suppliers: Array.isArray(suppliers) ? suppliers.length : 0
	};
}

/** Who of the invited suppliers has bid, for staff of the buying organisation; suppliers get 403. */
export async function invitedBidStatus(actor: SessionUser, eventId: string): Promise<BidStatus> {
	const access = await eventFor(actor, eventId);
	if (access.view !== 'staff') throw new RuleViolation('Suppliers do not see other bidders.', undefined, 403);
	const [invited, last] = await Promise.all([invitedWithBids(db(), eventId), lastReminder(db(), eventId)]);
	return {
		open: effectiveState(access.event) === 'open',
		timeZone: access.event.time_zone,
		invited,
		lastReminder: last
	};
}

/** When the next reminder may go: an interval after the last, rounded up to the minute that is shown. */
export const nextReminderAt = (last: Pick<LastReminder, 'at'>) =>
	new Date(Math.ceil((last.at.getTime() + REMINDER_INTERVAL_MS) / 60_000) * 60_000);

const inZone = (at: Date, event: Pick<EventRow, 'time_zone'>) =>
	`${formatInZone(at, event.time_zone)} (${event.time_zone})`;

/**
 * Mails every active user of each invited supplier organisation that has no bid revision at all; those
 * that withdrew a bid chose to and are left alone. Only a buyer, only while the event is open, at most
 * once an hour. Recorded in the trail, with the mail queued, in one transaction under the event's lock.
 */
export async function remindNonBidders(
	actor: SessionUser,
	eventId: string,
	context: RequestContext
): Promise<{ suppliers: number; mailed: number }> {
	// The access check (which may close an event past its deadline) runs before the transaction opens.
	await buyerEvent(actor, eventId);
	return db().transaction(async (trx) => {
		// Of two reminders at once, the second waits here and then finds the first one's trail entry.
		const event = (await lockEvent(trx, eventId))!;
		const at = now();
		const state = effectiveState(event, at);
		if (state !== 'open')
			throw new RuleViolation(
				state === 'draft'
					? 'The event is not open for bids yet: reminders can be sent once it is published.'
					: `The bid deadline passed at ${inZone(event.deadline, event)}: reminders go only while the event is open for bids.`,
				undefined,
				409
			);
		const last = await lastReminder(trx, eventId);
		if (last && at.getTime() - last.at.getTime() < REMINDER_INTERVAL_MS)
			throw new RuleViolation(
				`The last reminder for this event went at ${inZone(last.at, event)}. Another can be sent from ` +
					`${inZone(nextReminderAt(last), event)}: at most one an hour, so suppliers are not flooded.`,
				undefined,
				409
			);
		const invited = await invitedWithBids(trx, eventId);
		const waiting = new Set(invited.filter((s) => s.status === 'no_bid').map((s) => s.organisationId));
		if (!waiting.size)
			throw new RuleViolation(
				invited.some((s) => s.status === 'withdrawn')
					? 'Every invited supplier has bid or withdrawn its bid; nobody to remind.'
					: 'Every invited supplier has bid; nobody to remind.',
				undefined,
				409
			);
		const recipients = (await invitedSupplierUsers(trx, eventId)).filter((u) =>
			waiting.has(u.organisation_id)
		);
		if (!recipients.length)
			throw new RuleViolation(
				'None of the suppliers who have not bid has an active user to mail; nobody to remind.',
				undefined,
				409
			);
		await appendTrail(trx, {
			eventId,
			actor,
			action: REMINDER_ACTION,
			detail: { suppliers: [...waiting], mailed: recipients.length },
			at
		});
		// Built after the append, so each mail carries the trail's head with the reminder's entry in it.
		const mail = await eventMail(trx, event, context.origin, await buyerName(trx, event));
		await enqueueMail(
			trx,
			recipients.map((r) => bidReminderMail(r.email, mail))
		);
		return { suppliers: waiting.size, mailed: recipients.length };
	});
}

/** The bid status as JSON: times as ISO strings, with when the next reminder may go. */
export function bidStatusJson(status: BidStatus) {
	return {
		open: status.open,
		timeZone: status.timeZone,
		invited: status.invited.map((s) => ({ ...s, latestAt: s.latestAt?.toISOString() ?? null })),
		lastReminder: status.lastReminder && {
			at: status.lastReminder.at.toISOString(),
			byName: status.lastReminder.byName,
			suppliers: status.lastReminder.suppliers,
			nextAt: nextReminderAt(status.lastReminder).toISOString()
		}
	};
}
