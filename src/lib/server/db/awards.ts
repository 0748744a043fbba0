// Award plans, runs, sign-offs and notices: the SQL. The rules (who may, when, in which transaction) are
// in services/award-plans, award-runs, signoff and award-views; the worker side (claiming and finishing
// runs and their explanations, one owner at a time by a token; the sweep for runs whose worker stopped;
// sending notices) in services/run-execution and notice-sending. Times that workers compare (heartbeats)
// are the database's own clock, so workers on several machines agree.
import type { AwardRule } from '$lib/award/core/problem';
import type { Knex } from 'knex';
import { BoundedCache } from '../bounded-cache';
import type { Db } from './knex';
import type { ManualChange, NoticeRow, PlanRow, RunRow, RunView, SignoffRow, StoredProgress } from './tables';

export const LOWEST_COST = 'Lowest cost (no rules)';

// Plans

/** Makes the lowest-cost plan (no rules) of an event if it is not there yet. */
export async function ensureLowestCostPlan(db: Db, eventId: string): Promise<void> {
	await db('award_plans')
		.insert({ event_id: eventId, name: LOWEST_COST, rules: JSON.stringify([]), lowest_cost: true })
		.onConflict(['event_id', 'name'])
		.ignore();
}

export function listPlans(db: Db, eventId: string): Promise<PlanRow[]> {
	return db<PlanRow>('award_plans')
		.where({ event_id: eventId })
		.orderBy([{ column: 'lowest_cost', order: 'desc' }, 'created_at']);
}

export function findPlan(db: Db, id: string): Promise<PlanRow | undefined> {
	return db<PlanRow>('award_plans').where({ id }).first();
}

export function findEventPlan(db: Db, eventId: string, id: string): Promise<PlanRow | undefined> {
	return db<PlanRow>('award_plans').where({ id, event_id: eventId }).first();
}

export function findPlanByName(db: Db, eventId: string, name: string): Promise<PlanRow | undefined> {
	return db<PlanRow>('award_plans').where({ event_id: eventId, name }).first();
}

export async function insertPlan(
	db: Db,
	plan: { eventId: string; name: string; rules: AwardRule[]; createdBy: number }
): Promise<PlanRow> {
	const [row] = await db('award_plans')
		.insert({
			event_id: plan.eventId,
			name: plan.name,
			rules: JSON.stringify(plan.rules),
			created_by: plan.createdBy
		})
		.returning('*');
	return row as PlanRow;
}

export async function updatePlan(
	db: Db,
	id: string,
	plan: { name: string; rules: AwardRule[] }
): Promise<PlanRow> {
	const [row] = await db('award_plans')
		.where({ id })
		.update({ name: plan.name, rules: JSON.stringify(plan.rules), updated_at: db.fn.now() })
		.returning('*');
	return row as PlanRow;
}

// Runs

export function findRun(db: Db, id: string): Promise<RunRow | undefined> {
	return db<RunRow>('award_runs').where({ id }).first();
}

/** Every column of a run but its problem, which comes as { currency, rules } (RunView). */
const RUN_VIEW_COLUMNS: (keyof RunView)[] = [
	'id',
	'event_id',
	'plan_id',
	'number',
	'plan_name',
	'status',
	'cancel_requested',
	'problem_sha256',
	'result',
	'result_sha256',
	'solver_version',
	'options',
	'error',
	'attempts',
	'created_by',
	'queued_at',
	'started_at',
	'finished_at',
	'heartbeat_at',
	'owner',
	'restarts',
	'solve_progress',
	'explanation',
	'explanation_status',
	'explanation_error',
	'explanation_sha256',
	'adjusted_from',
	'adjustments',
	'round'
];

/** The columns that change over a run's life (status, owner, explanation status…): all but its content. */
const RUN_STATE_COLUMNS = RUN_VIEW_COLUMNS.filter((c) => c !== 'result' && c !== 'explanation');
const PROBLEM_SUMMARY = `jsonb_build_object('currency', problem->'currency', 'rules', problem->'rules') as problem`;

type RunContent = Pick<RunView, 'result' | 'explanation'>;

/**
 * A finished run's result and explanation, parsed, under the run's id and their SHA-256s: written once
 * (the explanation later, under its own hash), they never change under that key. A 300-item result is
 * about 100 kB of JSON that every view of the run read and parsed again; bounded by the JSON's length.
 */
const runContents = new BoundedCache<RunContent>(32 * 1024 * 1024);

const contentKey = (run: Pick<RunView, 'id' | 'result_sha256' | 'explanation_sha256'>) =>
	run.result_sha256 ? `${run.id}|${run.result_sha256.trim()}|${run.explanation_sha256?.trim() ?? '-'}` : null;

/**
 * Runs as RunView: their state read every time, their content from the cache when it is there. A run
 * whose content is not (or that has none yet) is read whole in one more query, and that whole row is what
 * comes back, so a run is never shown with the state of one moment and the content of another.
 */
async function runViews(db: Db, select: (q: Knex.QueryBuilder) => Knex.QueryBuilder): Promise<RunView[]> {
	const states = (await select(
		db('award_runs').select(...RUN_STATE_COLUMNS, db.raw(PROBLEM_SUMMARY))
	)) as Omit<RunView, keyof RunContent>[];
	const found = new Map<string, RunContent>();
	for (const run of states) {
		const key = contentKey(run);
		const content = key ? runContents.get(key) : undefined;
		if (content) found.set(run.id, content);
	}
	const missing = states.filter((r) => !found.has(r.id)).map((r) => r.id);
	const whole = new Map<string, RunView>();
	if (missing.length) {
		const rows = (await db('award_runs')
			.whereIn('id', missing)
			.select(
				...RUN_STATE_COLUMNS,
				db.raw(PROBLEM_SUMMARY),
				db.raw('result::text as result'),
				db.raw('explanation::text as explanation')
			)) as (Omit<RunView, keyof RunContent> & { result: string | null; explanation: string | null })[];
		for (const row of rows) {
			const content: RunContent = {
				result: row.result === null ? null : JSON.parse(row.result),
				explanation: row.explanation === null ? null : JSON.parse(row.explanation)
			};
			const key = contentKey(row);
			const shared = key
				? runContents.set(key, content, (row.result?.length ?? 0) + (row.explanation?.length ?? 0))
				: content;
			whole.set(row.id, { ...row, ...shared });
		}
	}
	return states.flatMap((run) => {
		const read = whole.get(run.id);
		if (read) return [read];
		const content = found.get(run.id);
		// A run removed between the two reads is left out, as if the first had not seen it.
		return content ? [{ ...run, ...content } as RunView] : [];
	});
}

export async function findRunView(db: Db, id: string): Promise<RunView | undefined> {
	return (await runViews(db, (q) => q.where({ id })))[0];
}

export async function listRuns(db: Db, eventId: string): Promise<RunView[]> {
	return runViews(db, (q) => q.where({ event_id: eventId }).orderBy('number', 'desc'));
}

/** Some runs of an event, by id (ids of other events are left out). */
export async function listRunsById(db: Db, eventId: string, ids: string[]): Promise<RunView[]> {
	return runViews(db, (q) => q.where({ event_id: eventId }).whereIn('id', ids).orderBy('number', 'desc'));
}

export async function nextRunNumber(db: Db, eventId: string): Promise<number> {
	const [row] = await db('award_runs')
		.where({ event_id: eventId })
		.select(db.raw('coalesce(max(number), 0)::int + 1 as next'));
	return (row as { next: number }).next;
}

export async function insertRun(
	db: Db,
	run: {
		eventId: string;
		planId: string;
		number: number;
		planName: string;
		problem: unknown;
		problemSha256: string;
		options: Record<string, unknown>;
		createdBy: number;
		round?: number;
		adjustedFrom?: string;
		adjustments?: ManualChange[];
		/** Exclusions of abnormally low lines or bids the problem was built without. */
		excluded?: unknown[];
	}
): Promise<RunRow> {
	const [row] = await db('award_runs')
		.insert({
			event_id: run.eventId,
			plan_id: run.planId,
			number: run.number,
			plan_name: run.planName,
			status: 'queued',
			problem: JSON.stringify(run.problem),
			problem_sha256: run.problemSha256,
			options: JSON.stringify(run.options),
			created_by: run.createdBy,
			round: run.round ?? 1,
			adjusted_from: run.adjustedFrom ?? null,
			adjustments: run.adjustments ? JSON.stringify(run.adjustments) : null,
			...(run.excluded ? { excluded: JSON.stringify(run.excluded) } : {})
		})
		.returning('*');
	return row as RunRow;
}

/** Flags a run for cancelling and ends it if still queued; true when it ended here. */
export async function requestRunCancel(db: Db, id: string, at: Date): Promise<boolean> {
	await db('award_runs').where({ id }).update({ cancel_requested: true });
	const ended = await db('award_runs')
		.where({ id, status: 'queued' })
		.update({ status: 'cancelled', finished_at: at, error: 'cancelled before it started' });
	return ended > 0;
}

// Sign-offs

export function pendingSignoff(db: Db, eventId: string): Promise<SignoffRow | undefined> {
	return db<SignoffRow>('signoffs')
		.where({ event_id: eventId })
		.whereNull('decision')
		.whereNull('superseded_at')
		.first();
}

/** The undecided sign-off of a run, locked for the deciding transaction. */
export function lockPendingSignoffOfRun(db: Db, runId: string): Promise<SignoffRow | undefined> {
	return db<SignoffRow>('signoffs')
		.where({ run_id: runId })
		.whereNull('decision')
		.whereNull('superseded_at')
		.forUpdate()
		.first();
}

export async function supersedePendingSignoffs(
	db: Db,
	eventId: string,
	at: Date,
	reason: string
): Promise<void> {
	await db('signoffs')
		.where({ event_id: eventId })
		.whereNull('decision')
		.whereNull('superseded_at')
		.update({ superseded_at: at, superseded_reason: reason });
}

export async function insertSignoff(
	db: Db,
	signoff: { eventId: string; runId: string; submittedBy: number; boundHash: string; justification: string }
): Promise<SignoffRow> {
	const [row] = await db('signoffs')
		.insert({
			event_id: signoff.eventId,
			run_id: signoff.runId,
			submitted_by: signoff.submittedBy,
			bound_hash: signoff.boundHash,
			justification: signoff.justification
		})
		.returning('*');
	return row as SignoffRow;
}

export async function recordDecision(
	db: Db,
	id: string,
	decision: { decision: 'approve' | 'return'; decidedBy: number; at: Date; comment: string | null }
): Promise<SignoffRow> {
	const [row] = await db('signoffs')
		.where({ id })
		.update({
			decision: decision.decision,
			decided_by: decision.decidedBy,
			decided_at: decision.at,
			comment: decision.comment
		})
		.returning('*');
	return row as SignoffRow;
}

export interface AwaitingSignoffRow {
	run_id: string;
	number: number;
	plan_name: string;
	reference: string;
	title: string;
	submitted_at: Date;
	submitted_by: string;
	time_zone: string;
}

/** Undecided sign-offs of an organisation's events, oldest first. */
export function listAwaitingSignoff(db: Db, organisationId: string): Promise<AwaitingSignoffRow[]> {
	return db('signoffs as s')
		.join('award_runs as r', 'r.id', 's.run_id')
		.join('events as e', 'e.id', 's.event_id')
		.join('users as u', 'u.id', 's.submitted_by')
		.where('e.organisation_id', organisationId)
		.whereNull('s.decision')
		.whereNull('s.superseded_at')
		.orderBy('s.submitted_at')
		.select(
			'r.id as run_id',
			'r.number',
			'r.plan_name',
			'e.reference',
			'e.title',
			'e.time_zone',
			's.submitted_at',
			'u.name as submitted_by'
		);
}

/** The sign-offs an approver decided, newest first: the approver's history on the home page. */
export function listDecidedBy(
	db: Db,
	organisationId: string,
	userId: number,
	limit = 20
): Promise<
	{
		run_id: string;
		event_id: string;
		number: number;
		plan_name: string;
		reference: string;
		title: string;
		time_zone: string;
		decision: 'approve' | 'return';
		decided_at: Date;
	}[]
> {
	return db('signoffs as s')
		.join('award_runs as r', 'r.id', 's.run_id')
		.join('events as e', 'e.id', 's.event_id')
		.where('e.organisation_id', organisationId)
		.where('s.decided_by', userId)
		.whereNotNull('s.decision')
		.orderBy('s.decided_at', 'desc')
		.limit(limit)
		.select(
			'r.id as run_id',
			'e.id as event_id',
			'r.number',
			'r.plan_name',
			'e.reference',
			'e.title',
			'e.time_zone',
			's.decision',
			's.decided_at'
		);
}

/** A run as a list shows it: its outcome and total, read in the database, never its allocation. */
export interface RunOutlineRow {
	id: string;
	event_id: string;
	number: number;
	plan_name: string;
	status: RunRow['status'];
	/** The engine's status of a finished run (optimal, infeasible…); null before it ends. */
	outcome: string | null;
	total_cost: number | null;
}

/** The runs of some events, each event's newest first (the auditor's home). */
export function listRunOutlines(db: Db, eventIds: string[]): Promise<RunOutlineRow[]> {
	return db('award_runs')
		.whereIn('event_id', eventIds)
		.orderBy([{ column: 'event_id' }, { column: 'number', order: 'desc' }])
		.select(
			'id',
			'event_id',
			'number',
			'plan_name',
			'status',
			db.raw(`case when status = 'done' then result->>'status' end as outcome`),
			db.raw(`case when status = 'done' then (result->>'totalCost')::float8 end as total_cost`)
		);
}

export interface EventSignoffRow extends Pick<
	SignoffRow,
	'run_id' | 'event_id' | 'submitted_at' | 'bound_hash' | 'decision' | 'decided_at' | 'superseded_at'
> {
	submitted_by_name: string;
	decided_by_name: string | null;
}

/** Every sign-off of some events, superseded ones too, oldest first, with the people's names. */
export function listEventSignoffs(db: Db, eventIds: string[]): Promise<EventSignoffRow[]> {
	return db('signoffs as s')
		.join('users as submitter', 'submitter.id', 's.submitted_by')
		.leftJoin('users as decider', 'decider.id', 's.decided_by')
		.whereIn('s.event_id', eventIds)
		.orderBy('s.submitted_at')
		.select(
			's.run_id',
			's.event_id',
			's.submitted_at',
			's.bound_hash',
			's.decision',
			's.decided_at',
			's.superseded_at',
			db.raw('coalesce(submitter.name, submitter.email) as submitted_by_name'),
			db.raw('coalesce(decider.name, decider.email) as decided_by_name')
		);
}

// Notices

export function insertNotices(
	db: Db,
	rows: Pick<NoticeRow, 'event_id' | 'run_id' | 'supplier_organisation_id' | 'kind' | 'standstill_ends_on'>[]
): Promise<{ id: string }[]> {
	return db('notices').insert(rows).returning('id');
}

export function findSupplierNotice(
	db: Db,
	runId: string,
	supplierOrganisationId: string
): Promise<NoticeRow | undefined> {
	return db<NoticeRow>('notices')
		.where({ run_id: runId, supplier_organisation_id: supplierOrganisationId })
		.first();
}

/** The invited supplier organisations of an event, by id and name (notices go to those that bid). */
export function invitedOrganisations(db: Db, eventId: string): Promise<{ id: string; name: string }[]> {
	return db('invitations as v')
		.join('organisations as o', 'o.id', 'v.supplier_organisation_id')
		.where('v.event_id', eventId)
		.select('o.id', 'o.name');
}

// Runs: execution by workers

/** A heartbeat missing or older than the bound number of seconds. */
const STALE = `(heartbeat_at is null or heartbeat_at < now() - make_interval(secs => ?))`;

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

/** Records where the owner's running solve stands; refused once the run is no longer the owner's. */
export async function recordSolveProgress(
	db: Db,
	runId: string,
	owner: string,
	progress: StoredProgress
): Promise<void> {
	await db('award_runs')
		.where({ id: runId, owner, status: 'running' })
		.update({ solve_progress: JSON.stringify(progress) });
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

// Notices: their sending by workers

export function findNotice(db: Db, noticeId: string): Promise<NoticeRow | undefined> {
	return db<NoticeRow>('notices').where({ id: noticeId }).first();
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
