// Sign-off: a buyer submits a finished run, an approver other than its author approves or returns it.
// The approval is bound to the hashes of the run's problem and result; approving awards the event and
// queues one notice per bidding supplier, with their jobs, in the same transaction.
import type { SessionUser } from '../auth/session-user';
import { now } from '../clock';
import { listRunSignoffs } from '../db/award-report';
import * as awards from '../db/awards';
import { lockEvent, setEventState, type EventRow } from '../db/events';
import { db, type Db } from '../db/knex';
import { standstillDays } from '../db/organisations';
import type { RunRow, SignoffRow } from '../db/tables';
import { justificationSchema } from '$lib/schemas/signoff';
import { QUEUES, sendJob } from '../jobs/queue';
import { appendTrail, sha256 } from '../trail';
import { findRun } from './award-runs';
import { staffEvent } from './award-plans';
import { RuleViolation } from './errors';
import { roundBarToSignoff } from './rounds';

export interface NoticeJob {
	noticeId: string;
}

const boundHash = (run: Pick<RunRow, 'problem_sha256' | 'result_sha256'>) =>
	sha256(`${run.problem_sha256.trim()}${run.result_sha256?.trim() ?? ''}`);

const usable = (run: RunRow) =>
	run.status === 'done' && ['optimal', 'feasible'].includes(String(run.result?.status ?? ''));

/**
 * Submits a finished run for sign-off with the author's justification (trimmed, 10 to 4,000 characters;
 * refused with 422 on "justification" otherwise), which the sign-off, the trail and the award report keep.
 */
export async function submitRun(
	user: SessionUser,
	runId: string,
	eventId: string | undefined,
	justification: string
): Promise<SignoffRow> {
	const { run, event } = await findRun(user, runId, eventId);
	if (user.role !== 'buyer') throw new RuleViolation('Only buyers submit runs for sign-off.', undefined, 403);
	const reason = justificationSchema.safeParse(justification);
	if (!reason.success) throw new RuleViolation(reason.error.issues[0]!.message, 'justification', 422);
	if (!usable(run))
		throw new RuleViolation('Only a finished run with an allocation can be submitted.', undefined, 409);
	return db().transaction(async (trx) => {
		const locked = (await lockEvent(trx, event.id))!;
		if (locked.state !== 'in_evaluation')
			throw new RuleViolation(
				locked.state === 'awaiting_signoff'
					? 'Another run is awaiting sign-off.'
					: 'The event is not in evaluation.',
				undefined,
				409
			);
		const roundBar = await roundBarToSignoff(trx, locked, run.round ?? 1);
		if (roundBar) throw new RuleViolation(roundBar, undefined, 409);
		const row = await awards.insertSignoff(trx, {
			eventId: event.id,
			runId: run.id,
			submittedBy: user.id,
			boundHash: boundHash(run),
			justification: reason.data
		});
		await setEventState(trx, event.id, 'awaiting_signoff');
		await appendTrail(trx, {
			eventId: event.id,
			actor: user,
			action: 'run submitted for sign-off',
			detail: {
				run: run.id,
				number: run.number,
				boundHash: row.bound_hash,
				justification: reason.data,
				state: { from: 'in_evaluation', to: 'awaiting_signoff' }
			}
		});
		return row;
	});
}

/** The sign-off of an event still waiting for a decision, for its staff. */
export async function pendingSignoff(user: SessionUser, eventId: string): Promise<SignoffRow | undefined> {
	await staffEvent(user, eventId);
	return awards.pendingSignoff(db(), eventId);
}

export interface RunSignoffRecord {
	submittedBy: string;
	submittedAt: string;
	/** null on submissions made before a justification was asked for. */
	justification: string | null;
	/** What an approval is bound to: SHA-256 over the run's problem and result hashes. */
	boundHash: string;
	/** null while it awaits a decision (or once superseded undecided). */
	decision: 'approve' | 'return' | null;
	decidedBy: string | null;
	decidedAt: string | null;
	comment: string | null;
	/** Set aside undecided, when the event went back to evaluation (a plan changed). */
	superseded: { at: string; reason: string | null } | null;
}

/**
 * Every sign-off of a run of the event (returned and superseded ones too), oldest first, with the
 * people's names: for the event's buyers, approvers and auditors.
 */
export async function runSignoffs(
	user: SessionUser,
	eventId: string,
	runId: string
): Promise<RunSignoffRecord[]> {
	await staffEvent(user, eventId);
	if (!/^[0-9a-f-]{36}$/i.test(runId)) return [];
	const rows = await listRunSignoffs(db(), runId);
	return rows
		.filter((s) => s.event_id === eventId)
		.map((s) => ({
			submittedBy: s.submitted_by_name ?? '',
			submittedAt: s.submitted_at.toISOString(),
			justification: s.justification,
			boundHash: s.bound_hash.trim(),
			decision: s.decision,
			decidedBy: s.decided_by_name,
			decidedAt: s.decided_at?.toISOString() ?? null,
			comment: s.comment,
			superseded: s.superseded_at ? { at: s.superseded_at.toISOString(), reason: s.superseded_reason } : null
		}));
}

/**
 * An approver's decision. Returning a run needs a comment saying why (refused with 422 on "comment"
 * otherwise); approving awards the event and queues the notices with their jobs.
 */
export async function decide(
	user: SessionUser,
	runId: string,
	decision: 'approve' | 'return',
	comment: string
): Promise<{ signoff: SignoffRow; notices: number }> {
	const { run, event } = await findRun(user, runId);
	if (user.role !== 'approver') throw new RuleViolation('Only approvers decide on a run.', undefined, 403);
	if (decision === 'return' && !comment.trim())
		throw new RuleViolation('Say why the run goes back.', 'comment', 422);
	return db().transaction(async (trx) => {
		const locked = (await lockEvent(trx, event.id))!;
		const signoff = await awards.lockPendingSignoffOfRun(trx, runId);
		if (!signoff || locked.state !== 'awaiting_signoff')
			throw new RuleViolation(
				'This run is not awaiting sign-off (it may have been returned to evaluation).',
				undefined,
				409
			);
		if (signoff.submitted_by === user.id || run.created_by === user.id)
			throw new RuleViolation('You are this run’s author: someone else must sign it off.', undefined, 403);
		if (boundHash(run) !== signoff.bound_hash.trim())
			throw new RuleViolation(
				'The run changed after it was submitted; it cannot be signed off.',
				undefined,
				409
			);
		const at = now();
		const row = await awards.recordDecision(trx, signoff.id, {
			decision,
			decidedBy: user.id,
			at,
			comment: comment || null
		});
		const state = decision === 'approve' ? 'awarded' : 'in_evaluation';
		await setEventState(trx, event.id, state, decision === 'approve' ? { awarded_run_id: run.id } : {});
		await appendTrail(trx, {
			eventId: event.id,
			actor: user,
			action: decision === 'approve' ? 'run approved' : 'run returned',
			detail: {
				run: run.id,
				number: run.number,
				boundHash: signoff.bound_hash.trim(),
				comment,
				state: { from: 'awaiting_signoff', to: state }
			},
			at
		});
		const notices = decision === 'approve' ? await queueNotices(trx, event, run, at) : 0;
		return { signoff: row, notices };
	});
}

/** Adds calendar days to a date and returns YYYY-MM-DD (UTC). */
export function standstillEnd(from: Date, days: number): string {
	return new Date(from.getTime() + days * 24 * 3600_000).toISOString().slice(0, 10);
}

/** One notice per bidding supplier (award if it won any quantity, regret otherwise), each with its job. */
async function queueNotices(trx: Db, event: EventRow, run: RunRow, at: Date): Promise<number> {
	const ends = standstillEnd(at, await standstillDays(trx, event.organisation_id));
	const awarded = new Set((run.result?.awards ?? []).filter((a) => a.quantity > 0).map((a) => a.supplier));
	const bidders = new Set(run.problem.suppliers.map((s) => s.ref));
	const rows = (await awards.invitedOrganisations(trx, event.id))
		.filter((o) => bidders.has(o.name))
		.map((o) => ({
			event_id: event.id,
			run_id: run.id,
			supplier_organisation_id: o.id,
			kind: awarded.has(o.name) ? ('award' as const) : ('regret' as const),
			standstill_ends_on: ends
		}));
	if (!rows.length) return 0;
	const stored = await awards.insertNotices(trx, rows);
	for (const { id } of stored)
		await sendJob(trx, QUEUES.notice, { noticeId: id } satisfies NoticeJob, {
			retryLimit: 30,
			retryDelay: 2,
			retryBackoff: true
		});
	return stored.length;
}
