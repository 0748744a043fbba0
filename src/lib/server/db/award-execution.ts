// The SQL of the background work on awards: claiming and finishing runs and their explanations (one owner
// at a time, by a token), the sweep that finds runs whose worker stopped, notices, and the mail deliveries
// that make every mail go out once. Times that workers compare (heartbeats, leases) are the database's
// own clock, so workers on several machines agree.
import type { Db } from './knex';
import type { MailDeliveryRow, NoticeRow, OrganisationRow, RunRow } from './tables';

/** A heartbeat missing or older than the bound number of seconds. */
const STALE = `(heartbeat_at is null or heartbeat_at < now() - make_interval(secs => ?))`;

export function findRunRow(db: Db, runId: string): Promise<RunRow | undefined> {
	return db<RunRow>('award_runs').where({ id: runId }).first();
}

/**
 * Takes a run for `owner`: a queued run, or a running one whose heartbeat is older than `staleSeconds`
 * (its worker died). One statement, so two workers never both get it. Counts the attempt.
 */
export async function claimRun(
	db: Db,
	runId: string,
	owner: string,
	staleSeconds: number
): Promise<RunRow | undefined> {
	const [row] = await db<RunRow>('award_runs')
		.where({ id: runId })
		.whereRaw(`(status = 'queued' or (status = 'running' and ${STALE}))`, [staleSeconds])
		.update({
			status: 'running',
			owner,
			heartbeat_at: db.fn.now(),
			started_at: db.raw('coalesce(started_at, ?)', [new Date()]),
			attempts: db.raw('attempts + 1')
		})
		.returning('*');
	return row as RunRow | undefined;
}

/** The owner's heartbeat; undefined when the run is no longer this owner's (taken over or ended). */
export async function beatRun(
	db: Db,
	runId: string,
	owner: string,
	phase: 'solve' | 'explain'
): Promise<{ cancel_requested: boolean } | undefined> {
	const [row] = await db('award_runs')
		.where({ id: runId, owner })
		.where(phase === 'solve' ? { status: 'running' } : { status: 'done', explanation_status: 'running' })
		.update({ heartbeat_at: db.fn.now() })
		.returning(['cancel_requested']);
	return row as { cancel_requested: boolean } | undefined;
}

export async function isCancelRequested(db: Db, runId: string): Promise<boolean> {
	const row = await db('award_runs').where({ id: runId }).first('cancel_requested');
	return Boolean(row?.cancel_requested);
}

/** Ends a running run, only if `owner` still holds it: the result is written once. */
export async function finishOwnedRun(
	db: Db,
	runId: string,
	owner: string,
	fields: Record<string, unknown>
): Promise<RunRow | undefined> {
	const [row] = await db<RunRow>('award_runs')
		.where({ id: runId, owner, status: 'running' })
		.update({ ...fields, heartbeat_at: null } as never)
		.returning('*');
	return row as RunRow | undefined;
}

/** Takes a finished run's explanation for `owner`: pending, or running with a stale heartbeat. */
export async function claimExplanation(
	db: Db,
	runId: string,
	owner: string,
	staleSeconds: number
): Promise<RunRow | undefined> {
	const [row] = await db<RunRow>('award_runs')
		.where({ id: runId, status: 'done' })
		.whereRaw(`(explanation_status = 'pending' or (explanation_status = 'running' and ${STALE}))`, [
			staleSeconds
		])
		.update({ explanation_status: 'running', owner, heartbeat_at: db.fn.now() })
		.returning('*');
	return row as RunRow | undefined;
}

export async function finishOwnedExplanation(
	db: Db,
	runId: string,
	owner: string,
	fields: {
		explanation_status: 'done' | 'failed';
		explanation?: string | null;
		explanation_sha256?: string | null;
		explanation_error?: string | null;
	}
): Promise<RunRow | undefined> {
	const [row] = await db<RunRow>('award_runs')
		.where({ id: runId, owner, status: 'done', explanation_status: 'running' })
		.update({ ...fields, heartbeat_at: null } as never)
		.returning('*');
	return row as RunRow | undefined;
}

export type StaleWork = Pick<RunRow, 'id' | 'event_id' | 'number' | 'restarts' | 'status' | 'attempts'> & {
	phase: 'solve' | 'explain';
};

/**
 * Runs (solving) and explanations (being worked out) whose owner's heartbeat is older than
 * `staleSeconds`, locked for this transaction; rows another sweep holds are skipped.
 */
export async function lockStaleWork(db: Db, staleSeconds: number, limit = 20): Promise<StaleWork[]> {
	const rows = await db('award_runs')
		.whereRaw(`(status = 'running' or (status = 'done' and explanation_status = 'running')) and ${STALE}`, [
			staleSeconds
		])
		.orderBy('heartbeat_at')
		.limit(limit)
		.forUpdate()
		.skipLocked()
		.select('id', 'event_id', 'number', 'restarts', 'status', 'attempts');
	return rows.map((r: Omit<StaleWork, 'phase'>) => ({
		...r,
		phase: r.status === 'running' ? 'solve' : 'explain'
	}));
}

/** Puts a run whose worker stopped back in the queue (its job is sent by the caller, in the same transaction). */
export async function requeueRun(db: Db, runId: string): Promise<void> {
	await db('award_runs')
		.where({ id: runId, status: 'running' })
		.update({ status: 'queued', owner: null, heartbeat_at: null, restarts: db.raw('restarts + 1') });
}

export async function requeueExplanation(db: Db, runId: string): Promise<void> {
	await db('award_runs')
		.where({ id: runId, status: 'done', explanation_status: 'running' })
		.update({
			explanation_status: 'pending',
			owner: null,
			heartbeat_at: null,
			restarts: db.raw('restarts + 1')
		});
}

export async function failStaleRun(db: Db, runId: string, error: string, at: Date): Promise<void> {
	await db('award_runs').where({ id: runId, status: 'running' }).update({
		status: 'failed',
		error,
		finished_at: at,
		owner: null,
		heartbeat_at: null,
		explanation_status: 'not_needed'
	});
}

export async function failStaleExplanation(db: Db, runId: string, error: string): Promise<void> {
	await db('award_runs')
		.where({ id: runId, status: 'done', explanation_status: 'running' })
		.update({ explanation_status: 'failed', explanation_error: error, owner: null, heartbeat_at: null });
}

// Notices

export function findNotice(db: Db, noticeId: string): Promise<NoticeRow | undefined> {
	return db<NoticeRow>('notices').where({ id: noticeId }).first();
}

export function findOrganisation(db: Db, id: string): Promise<OrganisationRow | undefined> {
	return db<OrganisationRow>('organisations').where({ id }).first();
}

/** The active supplier users of an organisation: a notice goes to each of them. */
export async function noticeRecipients(db: Db, organisationId: string): Promise<string[]> {
	const rows: { email: string }[] = await db('users')
		.where({ organisation_id: organisationId, role: 'supplier' })
		.whereNull('deactivated_at')
		.orderBy('id')
		.select('email');
	return rows.map((r) => r.email);
}

/** The dispatch time (which starts the standstill) is the first successful send, and never moves later. */
export async function recordNoticeDispatch(db: Db, noticeId: string, at: Date): Promise<void> {
	await db('notices')
		.where({ id: noticeId })
		.update({ sent_at: db.raw('coalesce(sent_at, ?)', [at]) });
}

export async function recordNoticeFailure(db: Db, noticeId: string, error: string): Promise<void> {
	await db('notices').where({ id: noticeId }).increment('attempts', 1).update({ last_error: error });
}

/** Marks the notice sent once every recipient has it; false when it was marked already. */
export async function completeNotice(db: Db, noticeId: string, at: Date): Promise<boolean> {
	const updated = await db('notices')
		.where({ id: noticeId })
		.whereNot({ status: 'sent' })
		.increment('attempts', 1)
		.update({ status: 'sent', sent_at: db.raw('coalesce(sent_at, ?)', [at]), last_error: null });
	return updated > 0;
}

// Mail deliveries

export type DeliveryClaim =
	/** This sender holds the delivery: nothing went out under its key yet. */
	| { state: 'claimed'; row: MailDeliveryRow }
	/** This sender holds a delivery whose earlier sender stopped mid-send: it may or may not have gone out. */
	| { state: 'ambiguous'; row: MailDeliveryRow; previousClaim: Date }
	/** Sent already, or settled as unknown: not sent again. */
	| { state: 'sent' | 'unknown'; row: MailDeliveryRow }
	/** Another sender holds it within its lease. */
	| { state: 'in_flight'; row: MailDeliveryRow };

export async function claimDelivery(
	db: Db,
	mail: { key: string; recipient: string; subject: string; messageId: string; sender: string },
	leaseSeconds: number
): Promise<DeliveryClaim> {
	const claim = {
		status: 'sending',
		claimed_at: db.fn.now(),
		sender: mail.sender,
		attempts: db.raw('attempts + 1')
	};
	const [inserted] = await db('mail_deliveries')
		.insert({
			key: mail.key,
			recipient: mail.recipient,
			subject: mail.subject,
			message_id: mail.messageId,
			status: 'sending',
			attempts: 1,
			sender: mail.sender
		})
		.onConflict('key')
		.ignore()
		.returning('*');
	if (inserted) return { state: 'claimed', row: inserted as MailDeliveryRow };
	// The relay refused it before: nothing went out, so it may go again.
	const [retried] = await db('mail_deliveries')
		.where({ key: mail.key, status: 'failed' })
		.update(claim)
		.returning('*');
	if (retried) return { state: 'claimed', row: retried as MailDeliveryRow };
	// A sender that stopped mid-send: re-leased to this one, with the time the earlier one began.
	const { rows: stale } = await db.raw<{ rows: (MailDeliveryRow & { previous_claim: Date })[] }>(
		`update mail_deliveries d
		 set claimed_at = now(), sender = ?, attempts = d.attempts + 1
		 from (select id, claimed_at as previous_claim from mail_deliveries where key = ? for update) p
		 where d.id = p.id and d.status = 'sending' and p.previous_claim < now() - make_interval(secs => ?)
		 returning d.*, p.previous_claim`,
		[mail.sender, mail.key, leaseSeconds]
	);
	if (stale[0]) return { state: 'ambiguous', row: stale[0], previousClaim: stale[0].previous_claim };
	const row = (await db<MailDeliveryRow>('mail_deliveries').where({ key: mail.key }).first())!;
	if (row.status === 'sent' || row.status === 'unknown') return { state: row.status, row };
	return { state: 'in_flight', row };
}

export async function settleDelivery(
	db: Db,
	id: string,
	fields: { status: 'sent' | 'failed' | 'unknown' | 'sending'; sent_at?: Date; last_error?: string | null }
): Promise<void> {
	await db('mail_deliveries')
		.where({ id })
		.update({
			...fields,
			...(fields.sent_at ? { sent_at: db.raw('coalesce(sent_at, ?)', [fields.sent_at]) } : {})
		});
}

/** Leaves a delivery "sending" but past its lease, so the next attempt settles it at once. */
export async function releaseAmbiguousDelivery(
	db: Db,
	id: string,
	leaseSeconds: number,
	error: string
): Promise<void> {
	await db('mail_deliveries')
		.where({ id })
		.update({
			claimed_at: db.raw(`now() - make_interval(secs => ?)`, [leaseSeconds + 1]),
			last_error: error
		});
}
