// Award plans, runs, sign-off and notices. A run snapshots the open bids (landed cost where the buyer set
// freight and duty adders) and the plan's rules into an award problem, stores it with its SHA-256 and
// solves it in a worker process (pg-boss queue "award-run"); the result is stored with its hash too. An
// approval is bound to both hashes; a later change to the plan sends the event back to evaluation.
import { describeRule } from '$lib/award/core/describe';
import { parseProblem, ruleSchema, type AwardProblem, type AwardRule } from '$lib/award/core/problem';
import type { SessionUser } from '../auth/session-user';
import { now } from '../clock';
import { visibleBids } from '../db/bids';
import { listInvitations, listItems, lockEvent, type EventRow } from '../db/events';
import { db, type Db } from '../db/knex';
import type { PlanRow, RunRow, SignoffRow } from '../db/tables';
import { jobs, QUEUES } from '../jobs';
import { appendTrail, canonicalJson, sha256 } from '../trail';
import { RuleViolation } from './errors';
import { effectiveState, eventFor } from './events';

export type { PlanRow, RunRow, SignoffRow };

export const LOWEST_COST = 'Lowest cost (no rules)';

async function staffEvent(user: SessionUser, id: string): Promise<EventRow> {
	const access = await eventFor(user, id);
	if (access.view !== 'staff')
		throw new RuleViolation('Award plans are for the buying organisation.', undefined, 403);
	return access.event;
}

async function buyerOnly(user: SessionUser, id: string): Promise<EventRow> {
	const event = await staffEvent(user, id);
	if (user.role !== 'buyer')
		throw new RuleViolation('Only buyers build plans and start runs.', undefined, 403);
	return event;
}

/** The plans of an event; the lowest-cost plan (no rules) always exists. */
export async function listPlans(user: SessionUser, eventId: string): Promise<PlanRow[]> {
	await staffEvent(user, eventId);
	await db()('award_plans')
		.insert({ event_id: eventId, name: LOWEST_COST, rules: JSON.stringify([]), lowest_cost: true })
		.onConflict(['event_id', 'name'])
		.ignore();
	return db()<PlanRow>('award_plans')
		.where({ event_id: eventId })
		.orderBy([{ column: 'lowest_cost', order: 'desc' }, 'created_at']);
}

export function checkRules(
	input: unknown
): { ok: true; rules: AwardRule[] } | { ok: false; problems: string[] } {
	if (!Array.isArray(input)) return { ok: false, problems: ['rules: must be a list'] };
	const problems: string[] = [];
	const rules: AwardRule[] = [];
	input.forEach((raw, k) => {
		const parsed = ruleSchema.safeParse(raw);
		if (parsed.success) rules.push(parsed.data as AwardRule);
		else
			problems.push(
				...parsed.error.issues.map(
					(i) => `rules[${k}]${i.path.length ? `.${i.path.join('.')}` : ''}: ${i.message}`
				)
			);
	});
	return problems.length ? { ok: false, problems } : { ok: true, rules };
}

/** Sends an event awaiting sign-off back to evaluation, superseding the pending sign-off. */
async function backToEvaluation(trx: Db, event: EventRow, actor: SessionUser, reason: string): Promise<void> {
	if (event.state !== 'awaiting_signoff') return;
	await trx('signoffs')
		.where({ event_id: event.id })
		.whereNull('decision')
		.whereNull('superseded_at')
		.update({ superseded_at: now(), superseded_reason: reason });
	await trx('events').where({ id: event.id }).update({ state: 'in_evaluation', updated_at: trx.fn.now() });
	await appendTrail(trx, {
		eventId: event.id,
		actor,
		action: 'returned to evaluation',
		detail: { reason, state: { from: 'awaiting_signoff', to: 'in_evaluation' } }
	});
}

export async function savePlan(
	user: SessionUser,
	eventId: string,
	plan: { id?: string; name: string; rules: AwardRule[] }
): Promise<PlanRow> {
	await buyerOnly(user, eventId);
	return db().transaction(async (trx) => {
		const event = (await lockEvent(trx, eventId))!;
		if (['awarded', 'cancelled'].includes(event.state))
			throw new RuleViolation('The event is awarded: its plans are final.', undefined, 409);
		let row: PlanRow;
		if (plan.id) {
			const existing = await trx<PlanRow>('award_plans').where({ id: plan.id, event_id: eventId }).first();
			if (!existing) throw new RuleViolation('There is no such plan in this event.', undefined, 404);
			if (existing.lowest_cost)
				throw new RuleViolation('The lowest-cost plan has no rules by definition.', undefined, 409);
			[row] = await trx('award_plans')
				.where({ id: plan.id })
				.update({ name: plan.name, rules: JSON.stringify(plan.rules), updated_at: trx.fn.now() })
				.returning('*');
			await backToEvaluation(trx, event, user, `plan “${plan.name}” changed`);
		} else {
			const clash = await trx('award_plans').where({ event_id: eventId, name: plan.name }).first();
			if (clash) throw new RuleViolation(`A plan named “${plan.name}” exists already.`, 'name', 409);
			[row] = await trx('award_plans')
				.insert({
					event_id: eventId,
					name: plan.name,
					rules: JSON.stringify(plan.rules),
					created_by: user.id
				})
				.returning('*');
		}
		await appendTrail(trx, {
			eventId,
			actor: user,
			action: plan.id ? 'plan changed' : 'plan created',
			detail: { plan: row!.id, name: plan.name, rules: plan.rules }
		});
		return row!;
	});
}

const num = (v: string | null) => (v === null ? 0 : Number(v));

/** The award problem of an event now: current bids (withdrawn ones left out) at landed cost, and the rules. */
export async function snapshotProblem(event: EventRow, rules: AwardRule[]): Promise<AwardProblem> {
	const [items, bids, invitations] = await Promise.all([
		listItems(db(), event.id),
		visibleBids(db(), event.id, event.organisation_id, now()),
		listInvitations(db(), event.id)
	]);
	const tagsOf = new Map(invitations.map((i) => [i.supplier_organisation_id, i.tags]));
	const adder = new Map(items.map((i) => [i.ref, num(i.freight_per_unit) + num(i.duty_per_unit)]));
	const live = bids.filter((b) => b.source !== 'withdrawal');
	const round = (n: number) => Math.round(n * 1e6) / 1e6;
	return {
		currency: event.currency,
		items: items.map((i) => ({
			ref: i.ref,
			quantity: Number(i.quantity),
			unit: i.unit,
			...(i.lot_ref ? { lot: i.lot_ref } : {}),
			...(i.baseline_unit_price !== null ? { baselineUnitPrice: Number(i.baseline_unit_price) } : {})
		})),
		suppliers: live.map((b) => {
			const tags = tagsOf.get(b.supplierOrganisationId) ?? [];
			return {
				ref: b.supplierName,
				...(b.capacity !== null ? { capacity: Number(b.capacity) } : {}),
				...(tags.length ? { tags } : {})
			};
		}),
		bids: live.flatMap((b) =>
			b.lines.map((l) => ({
				supplier: b.supplierName,
				item: l.item,
				unitPrice: round(Number(l.unitPrice) + adder.get(l.item)!),
				...(l.maxQuantity !== null ? { maxQuantity: Number(l.maxQuantity) } : {}),
				...(l.priceBreaks.length
					? {
							priceBreaks: l.priceBreaks.map((p) => ({
								fromQuantity: Number(p.fromQuantity),
								unitPrice: round(Number(p.unitPrice) + adder.get(l.item)!)
							}))
						}
					: {})
			}))
		),
		bundles: live.flatMap((b) =>
			b.bundles.map((offer) => ({
				ref: `${b.supplierName} / ${offer.ref}`,
				supplier: b.supplierName,
				price: round(
					Number(offer.price) + offer.items.reduce((a, i) => a + adder.get(i.item)! * Number(i.quantity), 0)
				),
				items: offer.items.map((i) => ({ item: i.item, quantity: Number(i.quantity) }))
			}))
		),
		rules
	} as AwardProblem;
}

export interface AwardRunJob {
	runId: string;
}

export const RUN_OPTIONS = { timeLimit: 60, gap: 1e-4, explain: true };

/** Queues a run of a plan: the problem is fixed now, the solve happens in a worker process. */
export async function startRun(user: SessionUser, planId: string, eventId?: string): Promise<RunRow> {
	const plan = /^[0-9a-f-]{36}$/i.test(planId)
		? await db()<PlanRow>('award_plans').where({ id: planId }).first()
		: undefined;
	// Under an event's address, a plan of another event is as absent as one that does not exist.
	if (!plan || (eventId !== undefined && plan.event_id !== eventId))
		throw new RuleViolation('There is no such plan.', undefined, 404);
	const event = await buyerOnly(user, plan.event_id);
	if (['draft', 'open'].includes(effectiveState(event)))
		throw new RuleViolation(
			'Bids are sealed until the deadline: runs start after the opening.',
			undefined,
			409
		);
	if (event.state === 'awarded') throw new RuleViolation('The event is awarded already.', undefined, 409);
	const problem = await snapshotProblem(event, plan.rules);
	const parsed = parseProblem(problem);
	if (!parsed.ok)
		throw new RuleViolation(
			`The plan does not fit the bids: ${parsed.problems.slice(0, 5).join('; ')}`,
			undefined,
			422
		);
	const problemHash = sha256(canonicalJson(problem));
	const run = await db().transaction(async (trx) => {
		const locked = (await lockEvent(trx, event.id))!;
		const [{ next }] = await trx('award_runs')
			.where({ event_id: event.id })
			.select(trx.raw('coalesce(max(number), 0)::int + 1 as next'));
		const [row] = await trx('award_runs')
			.insert({
				event_id: event.id,
				plan_id: plan.id,
				number: next,
				plan_name: plan.name,
				status: 'queued',
				problem: JSON.stringify(problem),
				problem_sha256: problemHash,
				options: JSON.stringify(RUN_OPTIONS),
				created_by: user.id
			})
			.returning('*');
		if (locked.state === 'closed' || (locked.state === 'open' && effectiveState(locked) === 'closed'))
			await trx('events')
				.where({ id: event.id })
				.update({ state: 'in_evaluation', updated_at: trx.fn.now() });
		await appendTrail(trx, {
			eventId: event.id,
			actor: user,
			action: 'award run queued',
			detail: { run: row.id, number: next, plan: plan.name, problemSha256: problemHash, options: RUN_OPTIONS }
		});
		return row as RunRow;
	});
	const queue = await jobs();
	await queue.send(QUEUES.awardRun, { runId: run.id } satisfies AwardRunJob, {
		retryLimit: 2,
		retryDelay: 2,
		// As RUN_JOB_EXPIRY_SECONDS in jobs/award-runs.ts: a dead worker's job goes to another worker then.
		expireInSeconds: 1800
	});
	return run;
}

/** A run the user may see; given `eventId` (the address's event), a run of another event is a 404. */
export async function findRun(
	user: SessionUser,
	runId: string,
	eventId?: string
): Promise<{ run: RunRow; event: EventRow }> {
	if (!/^[0-9a-f-]{36}$/i.test(runId)) throw new RuleViolation('There is no such run.', undefined, 404);
	const run = await db()<RunRow>('award_runs').where({ id: runId }).first();
	if (!run || (eventId !== undefined && run.event_id !== eventId))
		throw new RuleViolation('There is no such run.', undefined, 404);
	const event = await staffEvent(user, run.event_id);
	return { run, event };
}

export async function listRuns(user: SessionUser, eventId: string): Promise<RunRow[]> {
	await staffEvent(user, eventId);
	return db()<RunRow>('award_runs').where({ event_id: eventId }).orderBy('number', 'desc');
}

export async function cancelRun(user: SessionUser, runId: string, eventId?: string): Promise<void> {
	const { run } = await findRun(user, runId, eventId);
	if (user.role !== 'buyer') throw new RuleViolation('Only buyers cancel runs.', undefined, 403);
	if (!['queued', 'running'].includes(run.status))
		throw new RuleViolation('The run has ended already.', undefined, 409);
	await db().transaction(async (trx) => {
		await trx('award_runs').where({ id: runId }).update({ cancel_requested: true });
		// A queued run ends here; a running one ends when its worker sees the flag (within a second).
		const ended = await trx('award_runs')
			.where({ id: runId, status: 'queued' })
			.update({ status: 'cancelled', finished_at: now(), error: 'cancelled before it started' });
		await appendTrail(trx, {
			eventId: run.event_id,
			actor: user,
			action: ended ? 'award run cancelled' : 'award run cancel requested',
			detail: { run: run.id, number: run.number }
		});
	});
}

const boundHash = (run: Pick<RunRow, 'problem_sha256' | 'result_sha256'>) =>
	sha256(`${run.problem_sha256.trim()}${run.result_sha256?.trim() ?? ''}`);

const usable = (run: RunRow) =>
	run.status === 'done' && ['optimal', 'feasible'].includes(String(run.result?.status ?? ''));

export async function submitRun(user: SessionUser, runId: string, eventId?: string): Promise<SignoffRow> {
	const { run, event } = await findRun(user, runId, eventId);
	if (user.role !== 'buyer') throw new RuleViolation('Only buyers submit runs for sign-off.', undefined, 403);
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
		const [row] = await trx('signoffs')
			.insert({ event_id: event.id, run_id: run.id, submitted_by: user.id, bound_hash: boundHash(run) })
			.returning('*');
		await trx('events')
			.where({ id: event.id })
			.update({ state: 'awaiting_signoff', updated_at: trx.fn.now() });
		await appendTrail(trx, {
			eventId: event.id,
			actor: user,
			action: 'run submitted for sign-off',
			detail: {
				run: run.id,
				number: run.number,
				boundHash: row.bound_hash,
				state: { from: 'in_evaluation', to: 'awaiting_signoff' }
			}
		});
		return row as SignoffRow;
	});
}

export async function pendingSignoff(eventId: string): Promise<SignoffRow | undefined> {
	return db()<SignoffRow>('signoffs')
		.where({ event_id: eventId })
		.whereNull('decision')
		.whereNull('superseded_at')
		.first();
}

export async function decide(
	user: SessionUser,
	runId: string,
	decision: 'approve' | 'return',
	comment: string
): Promise<{ signoff: SignoffRow; notices: number }> {
	const { run, event } = await findRun(user, runId);
	if (user.role !== 'approver') throw new RuleViolation('Only approvers decide on a run.', undefined, 403);
	const result = await db().transaction(async (trx) => {
		const locked = (await lockEvent(trx, event.id))!;
		const signoff = await trx<SignoffRow>('signoffs')
			.where({ run_id: runId })
			.whereNull('decision')
			.whereNull('superseded_at')
			.forUpdate()
			.first();
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
		const [row] = await trx('signoffs')
			.where({ id: signoff.id })
			.update({ decision, decided_by: user.id, decided_at: at, comment: comment || null })
			.returning('*');
		const state = decision === 'approve' ? 'awarded' : 'in_evaluation';
		await trx('events')
			.where({ id: event.id })
			.update({
				state,
				...(decision === 'approve' ? { awarded_run_id: run.id } : {}),
				updated_at: trx.fn.now()
			});
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
		let notices: string[] = [];
		if (decision === 'approve') notices = await queueNotices(trx, event, run, at);
		return { signoff: row as SignoffRow, notices };
	});
	if (result.notices.length) {
		const queue = await jobs();
		for (const id of result.notices)
			await queue.send(
				QUEUES.notice,
				{ noticeId: id },
				{ retryLimit: 30, retryDelay: 2, retryBackoff: true }
			);
	}
	return { signoff: result.signoff, notices: result.notices.length };
}

/** Adds calendar days to a date and returns YYYY-MM-DD (UTC). */
export function standstillEnd(from: Date, days: number): string {
	return new Date(from.getTime() + days * 24 * 3600_000).toISOString().slice(0, 10);
}

async function queueNotices(trx: Db, event: EventRow, run: RunRow, at: Date): Promise<string[]> {
	const organisation = await trx('organisations')
		.where({ id: event.organisation_id })
		.first('standstill_days');
	const ends = standstillEnd(at, organisation?.standstill_days ?? 10);
	const awarded = new Set(
		((run.result?.awards as { supplier: string; quantity: number }[] | undefined) ?? [])
			.filter((a) => a.quantity > 0)
			.map((a) => a.supplier)
	);
	const invited = await trx('invitations as v')
		.join('organisations as o', 'o.id', 'v.supplier_organisation_id')
		.where('v.event_id', event.id)
		.select('o.id', 'o.name');
	const bidders = new Set(run.problem.suppliers.map((s) => s.ref));
	const rows = invited
		.filter((o: { name: string }) => bidders.has(o.name))
		.map((o: { id: string; name: string }) => ({
			event_id: event.id,
			run_id: run.id,
			supplier_organisation_id: o.id,
			kind: awarded.has(o.name) ? 'award' : 'regret',
			standstill_ends_on: ends
		}));
	if (!rows.length) return [];
	const stored = await trx('notices').insert(rows).returning('id');
	return stored.map((r: { id: string }) => r.id);
}

export function planJson(plan: PlanRow, currency: string) {
	return {
		id: plan.id,
		name: plan.name,
		lowestCost: plan.lowest_cost,
		rules: plan.rules,
		preview: plan.rules.map((r) => r.label ?? describeRule(r, currency)),
		updatedAt: plan.updated_at.toISOString()
	};
}

export function runJson(run: RunRow, options: { withProblem?: boolean } = {}) {
	const end = run.finished_at ?? now();
	const result = run.result as (Record<string, unknown> & { gap?: number | null }) | null;
	return {
		id: run.id,
		eventId: run.event_id,
		number: run.number,
		planId: run.plan_id,
		plan: run.plan_name,
		status: run.status,
		cancelRequested: run.cancel_requested,
		progress: {
			queuedAt: run.queued_at.toISOString(),
			startedAt: run.started_at?.toISOString() ?? null,
			finishedAt: run.finished_at?.toISOString() ?? null,
			elapsedSeconds: run.started_at ? Math.max(0, (end.getTime() - run.started_at.getTime()) / 1000) : 0,
			attempts: run.attempts,
			gap: result?.gap ?? null
		},
		problemSha256: run.problem_sha256.trim(),
		resultSha256: run.result_sha256?.trim() ?? null,
		solverVersion: run.solver_version,
		options: run.options,
		error: run.error,
		result: run.status === 'done' ? run.result : null,
		rules: run.problem.rules.map((r, k) => ({
			index: k,
			text: r.label ?? describeRule(r, run.problem.currency)
		})),
		currency: run.problem.currency,
		...(options.withProblem ? { problem: run.problem } : {})
	};
}
export type RunJson = ReturnType<typeof runJson>;

/** A supplier's own result: its award lines once the event is awarded, or its regret; never another's. */
export async function myResult(user: SessionUser, eventId: string) {
	const access = await eventFor(user, eventId);
	if (access.view !== 'supplier')
		throw new RuleViolation('This is the supplier’s view of its result.', undefined, 403);
	const event = access.event;
	if (event.state !== 'awarded' || !event.awarded_run_id) return { status: 'pending' as const, lines: [] };
	const run = (await db()<RunRow>('award_runs').where({ id: event.awarded_run_id }).first())!;
	const notice = await db()('notices')
		.where({ run_id: run.id, supplier_organisation_id: user.organisationId })
		.first();
	const lines = (
		(run.result?.awards ?? []) as {
			supplier: string;
			item: string;
			quantity: number;
			unitPrice: number;
			cost: number;
		}[]
	)
		.filter((a) => a.supplier === user.organisationName && a.quantity > 0)
		.map(({ item, quantity, unitPrice, cost }) => ({ item, quantity, unitPrice, cost }));
	return {
		status: lines.length ? ('awarded' as const) : ('regret' as const),
		lines,
		currency: event.currency,
		total: lines.reduce((a, l) => a + l.cost, 0),
		noticeSentAt: notice?.sent_at?.toISOString() ?? null,
		standstillEndsOn: notice
			? String(
					notice.standstill_ends_on instanceof Date
						? notice.standstill_ends_on.toISOString().slice(0, 10)
						: notice.standstill_ends_on
				)
			: null
	};
}

/** Runs awaiting sign-off in the approver's organisation, oldest first. */
export async function awaitingSignoff(user: SessionUser) {
	const rows = await db()('signoffs as s')
		.join('award_runs as r', 'r.id', 's.run_id')
		.join('events as e', 'e.id', 's.event_id')
		.join('users as u', 'u.id', 's.submitted_by')
		.where('e.organisation_id', user.organisationId)
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
	return rows.map((r) => ({
		runId: r.run_id as string,
		number: r.number as number,
		plan: r.plan_name as string,
		event: `${r.reference} · ${r.title}`,
		submittedAt: (r.submitted_at as Date).toISOString(),
		submittedBy: r.submitted_by as string
	}));
}
