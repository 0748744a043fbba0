// What each role's home page lists: the work waiting for the person signed in, with the next step.
import type { SessionUser } from '../auth/session-user';
import { now } from '../clock';
import { listDecidedBy } from '../db/awards';
import { latestOwnRevisions } from '../db/bids';
import { listInvitedEvents, listOrganisationEvents } from '../db/events';
import { db } from '../db/knex';
import { effectiveState } from './events';

export interface SupplierHomeEvent {
	id: string;
	reference: string;
	title: string;
	deadline: string;
	timeZone: string;
	/** open: bids are taken; closed: the deadline passed and the buyer evaluates; awarded: a result is out. */
	stage: 'open' | 'closed' | 'awarded' | 'cancelled';
	bid: { revision: number; withdrawn: boolean; at: string } | null;
}

/** A supplier's invitations: open ones first (soonest deadline first), then the rest, newest first. */
export async function supplierHome(user: SessionUser): Promise<SupplierHomeEvent[]> {
	const [events, revisions] = await Promise.all([
		listInvitedEvents(db(), user.organisationId),
		latestOwnRevisions(db(), user.organisationId)
	]);
	const latest = new Map(revisions.map((r) => [r.event_id, r]));
	const at = now();
	const rows = events.map((e): SupplierHomeEvent => {
		const state = effectiveState(e, at);
		const own = latest.get(e.id);
		return {
			id: e.id,
			reference: e.reference,
			title: e.title,
			deadline: e.deadline.toISOString(),
			timeZone: e.time_zone,
			stage:
				state === 'open'
					? 'open'
					: state === 'awarded'
						? 'awarded'
						: state === 'cancelled'
							? 'cancelled'
							: 'closed',
			bid: own
				? {
						revision: own.number,
						withdrawn: own.source === 'withdrawal',
						at: own.submitted_at.toISOString()
					}
				: null
		};
	});
	const open = rows.filter((r) => r.stage === 'open').sort((a, b) => a.deadline.localeCompare(b.deadline));
	const rest = rows.filter((r) => r.stage !== 'open').sort((a, b) => b.deadline.localeCompare(a.deadline));
	return [...open, ...rest];
}

export interface BuyerHomeEvent {
	id: string;
	reference: string;
	title: string;
	deadline: string;
	timeZone: string;
	state: string;
	/** What the buyer does next, in a few words, and where. */
	next: string;
	href: string;
}

/** The buying organisation's events that still need something, with the next step of each. */
export async function buyerHome(
	user: SessionUser
): Promise<{ yours: BuyerHomeEvent[]; waiting: BuyerHomeEvent[] }> {
	const at = now();
	const events = await listOrganisationEvents(db(), user.organisationId);
	const yours: BuyerHomeEvent[] = [];
	const waiting: BuyerHomeEvent[] = [];
	for (const e of events) {
		const state = effectiveState(e, at);
		const base = {
			id: e.id,
			reference: e.reference,
			title: e.title,
			deadline: e.deadline.toISOString(),
			timeZone: e.time_zone,
			state
		};
		const page = `/buyer/events/${e.id}`;
		if (state === 'draft')
			yours.push({
				...base,
				next: e.items && e.invited ? 'Check the terms and publish' : 'Add items and invite suppliers',
				href: e.items ? `${page}/suppliers` : `${page}/items`
			});
		else if (state === 'closed' || state === 'in_evaluation')
			yours.push({ ...base, next: 'Compare the bids and run an award plan', href: `${page}/award` });
		else if (state === 'open')
			waiting.push({ ...base, next: 'Open for bids until the deadline', href: `${page}/bids` });
		else if (state === 'awaiting_signoff')
			waiting.push({ ...base, next: 'Waiting for an approver’s decision', href: `${page}/award` });
	}
	return { yours, waiting };
}

/** The runs an approver decided on, newest first (at most 20). */
export async function approverHistory(user: SessionUser) {
	const rows = await listDecidedBy(db(), user.organisationId, user.id);
	return rows.map((r) => ({
		runId: r.run_id,
		eventId: r.event_id,
		event: `${r.reference} · ${r.title}`,
		number: r.number,
		plan: r.plan_name,
		decision: r.decision,
		decidedAt: r.decided_at.toISOString(),
		timeZone: r.time_zone
	}));
}
