// What the award report reads beyond the run and the event: a run's sign-offs and notices, with the
// names of the people and supplier organisations behind them.
import type { Db } from './knex';
import type { NoticeRow, SignoffRow } from './tables';

export interface ReportSignoffRow extends SignoffRow {
	submitted_by_name: string | null;
	decided_by_name: string | null;
}

/** Every sign-off of a run (returned and superseded ones too), oldest first. */
export function listRunSignoffs(db: Db, runId: string): Promise<ReportSignoffRow[]> {
	return db('signoffs as s')
		.leftJoin('users as submitter', 'submitter.id', 's.submitted_by')
		.leftJoin('users as decider', 'decider.id', 's.decided_by')
		.where('s.run_id', runId)
		.orderBy('s.submitted_at')
		.select(
			's.*',
			db.raw('coalesce(submitter.name, submitter.email) as submitted_by_name'),
			db.raw('coalesce(decider.name, decider.email) as decided_by_name')
		);
}

/** Whether a run awaits sign-off or was approved: the runs an award report is made for. */
export async function isSubmittedOrApproved(db: Db, runId: string): Promise<boolean> {
	const row = await db('signoffs')
		.where({ run_id: runId })
		.whereNull('superseded_at')
		.where((q) => void q.whereNull('decision').orWhere('decision', 'approve'))
		.first('id');
	return Boolean(row);
}

export interface ReportNoticeRow extends NoticeRow {
	supplier_name: string;
}

export function listRunNotices(db: Db, runId: string): Promise<ReportNoticeRow[]> {
	return db('notices as n')
		.join('organisations as o', 'o.id', 'n.supplier_organisation_id')
		.where('n.run_id', runId)
		.orderBy('o.name')
		.select('n.*', 'o.name as supplier_name');
}

export async function userNames(db: Db, ids: number[]): Promise<Map<number, string>> {
	if (!ids.length) return new Map();
	const rows: { id: number; name: string | null; email: string }[] = await db('users')
		.whereIn('id', ids)
		.select('id', 'name', 'email');
	return new Map(rows.map((r) => [r.id, r.name ?? r.email]));
}

/**
 * The newest run of a plan solved to its proven optimum, not changed by hand (the comparison's lowest-cost
 * run: an adjusted run or one stopped by the time limit is not the lowest cost).
 */
export async function latestUsableRunOfPlan(db: Db, planId: string): Promise<string | undefined> {
	const row = await db('award_runs')
		.where({ plan_id: planId, status: 'done' })
		.whereNull('adjusted_from')
		.whereRaw(`result->>'status' = 'optimal'`)
		.orderBy('number', 'desc')
		.first('id');
	return row?.id as string | undefined;
}
