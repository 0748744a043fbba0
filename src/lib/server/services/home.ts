// What each role's home page lists: the work waiting for the person signed in, with the next step.
import type { SessionUser } from '../auth/session-user';
import { now } from '../clock';
import { listDecidedBy, listEventSignoffs, listRunOutlines, type EventSignoffRow } from '../db/awards';
import { latestOwnRevisions } from '../db/bids';
import { listInvitedEvents, listOrganisationEvents, type EventRow } from '../db/events';
import { db } from '../db/knex';
import { RuleViolation } from './errors';
import { closeIfDue, effectiveState, isPastDeadline } from './events';

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

export interface AuditHomeSignoff {
	submittedBy: string;
	submittedAt: string;
	/** null while it awaits a decision. */
	decision: 'approve' | 'return' | null;
	decidedBy: string | null;
	decidedAt: string | null;
	/** What the approval is bound to: SHA-256 over the run's problem and result hashes. */
	boundHash: string;
}

export interface AuditHomeRun {
	id: string;
	number: number;
	plan: string;
	status: string;
	outcome: string | null;
	totalCost: number | null;
	/** The run's current sign-off (superseded ones are in the trail), or null if never submitted. */
	signoff: AuditHomeSignoff | null;
	/** Whether the award report is made for it: awaiting sign-off or approved (as awardReport checks). */
	hasReport: boolean;
}

export interface AuditHomeEvent {
	id: string;
	reference: string;
	title: string;
	state: string;
	deadline: string;
	timeZone: string;
}

export interface AuditClosedEvent extends AuditHomeEvent {
	currency: string;
	/** The opening record: suppliers with a bid and their revisions; null if the bids were never opened. */
	opened: { at: string; suppliers: number; revisions: number } | null;
	runs: AuditHomeRun[];
	approved: { runNumber: number; plan: string; by: string; at: string; boundHash: string } | null;
}

/**
 * An auditor's work: the organisation's events past their deadline (newest deadline first) with the
 * opening, the runs and the sign-off; events before their deadline only by name, state and deadline,
 * since nothing derived from a bid may be shown before the opening. Drafts are not published: left out.
 */
export const AUDIT_PAGE = 20;

export async function auditorHome(
	user: SessionUser,
	page = 0
): Promise<{
	closed: AuditClosedEvent[];
	sealed: AuditHomeEvent[];
	/** The closed events are shown AUDIT_PAGE at a time, newest deadline first. */
	closedPage: { page: number; pages: number; total: number };
}> {
	if (!['auditor', 'buyer', 'approver'].includes(user.role))
		throw new RuleViolation('The audit view is for auditors.', undefined, 403);
	const at = now();
	const events = (await listOrganisationEvents(db(), user.organisationId)).filter((e) => e.state !== 'draft');
	const base = (e: EventRow): AuditHomeEvent => ({
		id: e.id,
		reference: e.reference,
		title: e.title,
		state: effectiveState(e, at),
		deadline: e.deadline.toISOString(),
		timeZone: e.time_zone
	});
	const sealed = events
		.filter((e) => !isPastDeadline(e, at))
		.map(base)
		.sort((a, b) => a.deadline.localeCompare(b.deadline));
	// Only the page shown is read in full (runs, sign-offs): an organisation's closed events only grow.
	const allPast = events
		.filter((e) => isPastDeadline(e, at))
		.sort((a, b) => b.deadline.getTime() - a.deadline.getTime());
	const pages = Math.max(1, Math.ceil(allPast.length / AUDIT_PAGE));
	const shown = Math.min(Math.max(0, Math.floor(page)), pages - 1);
	const past: EventRow[] = [];
	for (const e of allPast.slice(shown * AUDIT_PAGE, (shown + 1) * AUDIT_PAGE))
		// The first read after the deadline opens the bids, as eventFor does, so the opening record is there.
		past.push(e.state === 'open' ? ((await closeIfDue(e.id, 'first read after the deadline')) ?? e) : e);
	const ids = past.map((e) => e.id);
	const [runs, signoffs] = ids.length
		? await Promise.all([listRunOutlines(db(), ids), listEventSignoffs(db(), ids)])
		: [[], []];
	const current = new Map<string, EventSignoffRow>();
	for (const s of signoffs) if (!s.superseded_at) current.set(s.run_id, s);
	const closed = past.map((e): AuditClosedEvent => {
		const eventRuns = runs
			.filter((r) => r.event_id === e.id)
			.map((r): AuditHomeRun => {
				const s = current.get(r.id);
				return {
					id: r.id,
					number: r.number,
					plan: r.plan_name,
					status: r.status,
					outcome: r.outcome,
					totalCost: r.total_cost,
					signoff: s
						? {
								submittedBy: s.submitted_by_name,
								submittedAt: s.submitted_at.toISOString(),
								decision: s.decision,
								decidedBy: s.decided_by_name,
								decidedAt: s.decided_at?.toISOString() ?? null,
								boundHash: s.bound_hash.trim()
							}
						: null,
					hasReport: Boolean(s && s.decision !== 'return')
				};
			});
		const approvedRun = eventRuns.find((r) => r.signoff?.decision === 'approve');
		const record = e.opened_at ? e.opening_record : null;
		return {
			...base(e),
			currency: e.currency,
			opened: record ? { at: record.at, suppliers: record.suppliers, revisions: record.revisions } : null,
			runs: eventRuns,
			approved:
				approvedRun && approvedRun.signoff
					? {
							runNumber: approvedRun.number,
							plan: approvedRun.plan,
							by: approvedRun.signoff.decidedBy ?? '',
							at: approvedRun.signoff.decidedAt ?? '',
							boundHash: approvedRun.signoff.boundHash
						}
					: null
		};
	});
	closed.sort((a, b) => b.deadline.localeCompare(a.deadline));
	return { closed, sealed, closedPage: { page: shown, pages, total: allPast.length } };
}
