// Award plans, runs, sign-offs and notices: the SQL. The rules (who may, when, in which transaction) are
// in services/award-plans, award-runs, signoff and award-views.
import type { AwardRule } from '$lib/award/core/problem';
import type { Db } from './knex';
import type { NoticeRow, PlanRow, RunRow, SignoffRow } from './tables';

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

export function listRuns(db: Db, eventId: string): Promise<RunRow[]> {
	return db<RunRow>('award_runs').where({ event_id: eventId }).orderBy('number', 'desc');
}

/** Some runs of an event, by id (ids of other events are left out). */
export function listRunsById(db: Db, eventId: string, ids: string[]): Promise<RunRow[]> {
	return db<RunRow>('award_runs').where({ event_id: eventId }).whereIn('id', ids).orderBy('number', 'desc');
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
			created_by: run.createdBy
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
	signoff: { eventId: string; runId: string; submittedBy: number; boundHash: string }
): Promise<SignoffRow> {
	const [row] = await db('signoffs')
		.insert({
			event_id: signoff.eventId,
			run_id: signoff.runId,
			submitted_by: signoff.submittedBy,
			bound_hash: signoff.boundHash
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
			's.submitted_at',
			'u.name as submitted_by'
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
