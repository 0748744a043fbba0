// Row types of the tables, as the database returns them.
import type { AwardResult, Progress } from '$lib/award/core/engine';

/**
 * The engine's last report, and when it found the award it reports (`seconds` is when it reported:
 * a stronger bound comes later for the same award). Null before the first award; absent in rows
 * written before it was kept.
 */
export type StoredProgress = Progress & { awardSeconds?: number | null };
import type { AwardProblem, AwardRule } from '$lib/award/core/problem';
import type { Role } from '$lib/roles';

export type OrganisationKind = 'buyer' | 'supplier';

export interface OrganisationRow {
	id: string;
	name: string;
	kind: OrganisationKind;
	created_at: Date;
}

export interface UserRow {
	id: number;
	name: string | null;
	email: string;
	emailVerified: Date | null;
	image: string | null;
	role: Role;
	organisation_id: string;
	organisation_kind: OrganisationKind;
	password_hash: string | null;
	deactivated_at: Date | null;
	invited_by: number | null;
	created_at: Date;
}

export interface AccountEventRow {
	id: string;
	at: Date;
	actor_user_id: number | null;
	subject_user_id: number | null;
	action: string;
	detail: Record<string, unknown>;
	ip: string | null;
}

export interface PlanRow {
	id: string;
	event_id: string;
	name: string;
	rules: AwardRule[];
	lowest_cost: boolean;
	created_by: number | null;
	created_at: Date;
	updated_at: Date;
}

export type RunStatus = 'queued' | 'running' | 'done' | 'failed' | 'cancelled';

export interface RunRow {
	id: string;
	event_id: string;
	plan_id: string;
	number: number;
	plan_name: string;
	status: RunStatus;
	cancel_requested: boolean;
	problem: AwardProblem;
	problem_sha256: string;
	/** The engine's result, as stored when the run finished (null until then). */
	result: AwardResult | null;
	result_sha256: string | null;
	solver_version: string | null;
	options: Record<string, unknown>;
	error: string | null;
	attempts: number;
	created_by: number;
	queued_at: Date;
	started_at: Date | null;
	finished_at: Date | null;
	/** Set by the worker that owns a running run, every few seconds; a stale one means the worker died. */
	heartbeat_at: Date | null;
	/** The claim of the worker that owns the run now (a fresh token per claim): writes of an earlier owner are refused. */
	owner: string | null;
	/** How often a run (or its explanation) was taken over after its worker stopped. */
	restarts: number;
	/** Where the running solve stands, as its worker last wrote it (the engine's Progress). */
	solve_progress: StoredProgress | null;
	/** Rule costs, conflicts and sensitivity: worked out after the allocation, by their own job. */
	explanation: Pick<AwardResult, 'ruleCosts' | 'conflicts' | 'sensitivity'> | null;
	explanation_status: 'pending' | 'running' | 'done' | 'failed' | 'not_needed';
	explanation_error: string | null;
	explanation_sha256: string | null;
	/** An adjusted run: the run it was changed from by hand, and the changes (null for a plain run). */
	adjusted_from: string | null;
	adjustments: ManualChange[] | null;
	/** The round of bids the run used (1: the bids up to the event's deadline). */
	round: number;
}

/**
 * One change a buyer made by hand to a run's allocation; the adjusted run is solved again with each as a
 * fixed rule. `lock`: the supplier gets the whole item; `move`: `quantity` goes from `supplier` to `to`;
 * `exclude`: the supplier gets none of the item. `costChange`: what the change alone added to the total
 * of the run it was made on, before the rest was solved again (in the event's currency).
 */
export interface ManualChange {
	kind: 'lock' | 'move' | 'exclude';
	item: string;
	supplier: string;
	to?: string;
	quantity?: number;
	justification: string;
	costChange: number;
	by: { id: number; name: string };
	at: string;
	/** The run it was made on (an adjusted run changed again keeps the earlier changes). */
	onRun?: number;
}

/**
 * A run as the pages and the API read it: its problem cut to the currency and the rules. The snapshot of
 * every item and bid (about 100 kB of JSON for the 300-item demo) is read only where it is used: by the
 * worker, the export, the sign-off's notices and `GET /api/runs/:id?problem=1`.
 */
export type RunView = Omit<RunRow, 'problem'> & { problem: Pick<AwardProblem, 'currency' | 'rules'> };

export interface MailDeliveryRow {
	id: string;
	key: string;
	recipient: string;
	subject: string;
	status: 'sending' | 'sent' | 'failed' | 'unknown';
	message_id: string;
	attempts: number;
	sender: string | null;
	claimed_at: Date;
	sent_at: Date | null;
	last_error: string | null;
	created_at: Date;
}

export interface SignoffRow {
	id: string;
	event_id: string;
	run_id: string;
	submitted_by: number;
	submitted_at: Date;
	bound_hash: string;
	decision: 'approve' | 'return' | null;
	decided_by: number | null;
	decided_at: Date | null;
	comment: string | null;
	superseded_at: Date | null;
	superseded_reason: string | null;
	/** Why the author submits this run (the award report prints it); null on submissions made before it was asked. */
	justification: string | null;
}

export interface NoticeRow {
	id: string;
	event_id: string;
	run_id: string;
	supplier_organisation_id: string;
	kind: 'award' | 'regret';
	status: 'queued' | 'sent';
	queued_at: Date;
	sent_at: Date | null;
	/** A date column: pg returns a Date at local midnight, or the text when the type parser is set. */
	standstill_ends_on: Date | string;
	attempts: number;
	last_error: string | null;
}
