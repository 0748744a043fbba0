// What the award pages and API show of plans, runs and results: JSON shapes, the supplier's own result
// and the approver's queue.
import { ruleCostsAsStored } from '$lib/award/core/explanations/rule-costs';
import { ALLOCATION_PAGE_LINES } from '$lib/paging';
import { describeRule } from '$lib/award/core/describe';
import { ruleForReading, suppliersNamed } from '$lib/plan-suppliers';
import type { AwardResult } from '$lib/award/core/engine';
import type { SessionUser } from '../auth/session-user';
import { now } from '../clock';
import * as awards from '../db/awards';
import { db } from '../db/knex';
import type { AwardProblem } from '$lib/award/core/problem';
import { evaluatedSupplierTotals, priceBeforeCriteria } from '$lib/evaluation/apply-criteria';
import type { PlanRow, RunView } from '../db/tables';
import { RuleViolation } from './errors';
import { eventFor } from './events';
import { ownCurrencyAwards } from './currencies';
import { STALE_SECONDS } from './run-execution';

type AwardLine = AwardResult['awards'][number];

/** `names`: the invited suppliers' names by organisation id; rules are stored with the ids. */
export function planJson(plan: PlanRow, currency: string, names: ReadonlyMap<string, string>) {
	return {
		id: plan.id,
		name: plan.name,
		lowestCost: plan.lowest_cost,
		rules: plan.rules,
		suppliers: suppliersNamed(plan.rules, names),
		preview: plan.rules.map((r) => r.label ?? describeRule(ruleForReading(r, names), currency)),
		updatedAt: plan.updated_at.toISOString()
	};
}

/** `problem`: the run's whole problem, to include (the API's `?problem=1`). */
export function runJson(run: RunView, options: { problem?: AwardProblem } = {}) {
	const at = now();
	const end = run.finished_at ?? at;
	// Rule costs, conflicts and sensitivity come in their own column once their job is done.
	const merged: AwardResult | null =
		run.status === 'done' && run.result ? { ...run.result, ...(run.explanation ?? {}) } : null;
	// Runs stored before the rule costs' running total read in today's shape (the stored JSON is hashed).
	const result = merged?.ruleCosts ? { ...merged, ruleCosts: ruleCostsAsStored(merged.ruleCosts) } : merged;
	return {
		id: run.id,
		eventId: run.event_id,
		number: run.number,
		planId: run.plan_id,
		plan: run.plan_name,
		/** The round of bids the run used: each supplier's latest revision of rounds 1 to this one. */
		round: run.round,
		status: run.status,
		cancelRequested: run.cancel_requested,
		progress: {
			queuedAt: run.queued_at.toISOString(),
			startedAt: run.started_at?.toISOString() ?? null,
			finishedAt: run.finished_at?.toISOString() ?? null,
			elapsedSeconds: run.started_at ? Math.max(0, (end.getTime() - run.started_at.getTime()) / 1000) : 0,
			attempts: run.attempts,
			gap: run.result?.gap ?? null,
			// While it runs: the best award so far (null before the first), the lowest cost any award could
			// have as proven so far, and how far apart they are, as the solving worker last wrote them.
			best:
				run.status === 'running' && run.solve_progress
					? {
							afterSeconds: run.solve_progress.awardSeconds ?? run.solve_progress.seconds,
							totalCost: run.solve_progress.objective,
							bound: run.solve_progress.bound,
							gap:
								run.solve_progress.objective !== null && run.solve_progress.bound !== null
									? Math.max(0, run.solve_progress.objective - run.solve_progress.bound) /
										Math.max(1e-9, Math.abs(run.solve_progress.objective))
									: null
						}
					: null
		},
		problemSha256: run.problem_sha256.trim(),
		resultSha256: run.result_sha256?.trim() ?? null,
		solverVersion: run.solver_version,
		options: run.options,
		error: run.error,
		result,
		explanationStatus: run.explanation_status ?? 'done',
		// The worker died: its heartbeat stopped, or the sweep has put the run back in the queue.
		workerLost:
			(run.status === 'running' &&
				run.heartbeat_at != null &&
				at.getTime() - run.heartbeat_at.getTime() > STALE_SECONDS * 1000) ||
			(run.status === 'queued' && (run.restarts ?? 0) > 0),
		rules: run.problem.rules.map((r, k) => ({
			index: k,
			text: r.label ?? describeRule(r, run.problem.currency)
		})),
		currency: run.problem.currency,
		// An adjusted run: the run it was changed from by hand, and every change with who made it and why.
		adjustedFrom: run.adjusted_from ?? null,
		adjustments: run.adjustments ?? [],
		...(options.problem ? { problem: options.problem } : {})
	};
}
export type RunJson = ReturnType<typeof runJson>;

/** A run's line in the award page's list: its progress and outcome, without the allocation. */
export function runSummary(run: RunView) {
	const json = runJson(run);
	return {
		...json,
		result: null,
		outcome: json.result?.status ?? null,
		totalCost: json.result?.totalCost ?? null
	};
}
export type RunSummary = ReturnType<typeof runSummary>;

/** Lines of the allocation the run page asks for at a time, and the most one request may take. */
export const ALLOCATION_PAGE = ALLOCATION_PAGE_LINES;
export const ALLOCATION_PAGE_MAX = 500;
/** The page lists only the first of these; the API's full answer keeps them all. */
const SHOWN_LOSING_BIDS = 50;
const SHOWN_CAPACITY_PRICES = 20;

export type AllocationSort = 'item' | 'supplier' | 'cost';

export interface AllocationQuery {
	/** Matches item or supplier, case-insensitive. */
	filter?: string;
	sort?: AllocationSort;
	offset?: number;
	limit?: number;
}

/** One page of a result's allocation, filtered and sorted on the server (items keep the problem's order). */
export function allocationPage(result: Pick<AwardResult, 'awards'> | null, query: AllocationQuery = {}) {
	const needle = (query.filter ?? '').trim().toLowerCase();
	const matching = (result?.awards ?? []).filter(
		(l) => !needle || l.item.toLowerCase().includes(needle) || l.supplier.toLowerCase().includes(needle)
	);
	const sorted =
		query.sort === 'cost'
			? [...matching].sort((a, b) => b.cost - a.cost)
			: query.sort === 'supplier'
				? [...matching].sort((a, b) => a.supplier.localeCompare(b.supplier))
				: matching;
	const limit = Math.min(ALLOCATION_PAGE_MAX, Math.max(1, Math.trunc(query.limit ?? ALLOCATION_PAGE)));
	const offset = Math.max(0, Math.trunc(query.offset ?? 0));
	return { total: sorted.length, offset, limit, lines: sorted.slice(offset, offset + limit) };
}
export type AllocationPage = ReturnType<typeof allocationPage>;

/**
 * What the run page needs first: the run without its allocation lines (those come a page at a time, see
 * allocationPage) and with the sensitivity lists cut to what the page shows. A 300-item run page was
 * 144 kB with every line in it.
 */
export function runPageJson(run: RunView) {
	const json = runJson(run);
	const result = json.result;
	if (!result) return { ...json, allocationLines: 0 };
	return {
		...json,
		allocationLines: result.awards.length,
		result: {
			...result,
			awards: [],
			...(result.sensitivity
				? {
						sensitivity: {
							...result.sensitivity,
							// The page shows each one's sentence; the figures behind it stay in the full answer.
							losingBids: result.sensitivity.losingBids
								.slice(0, SHOWN_LOSING_BIDS)
								.map(({ text }) => ({ text })),
							capacityPrices: result.sensitivity.capacityPrices
								.slice(0, SHOWN_CAPACITY_PRICES)
								.map(({ text }) => ({ text })),
							coverPrices: []
						}
					}
				: {})
		}
	};
}
export type RunPageJson = ReturnType<typeof runPageJson>;

/** The allocation query of a request's search parameters (`filter`, `sort`, `offset`, `limit`). */
export function allocationQuery(params: URLSearchParams): AllocationQuery {
	const sort = params.get('sort');
	const number = (name: string) => {
		const value = Number(params.get(name));
		return Number.isFinite(value) ? value : undefined;
	};
	return {
		filter: (params.get('filter') ?? '').slice(0, 200),
		sort: sort === 'supplier' || sort === 'cost' ? sort : 'item',
		offset: number('offset'),
		limit: number('limit')
	};
}

/** A supplier's own award lines of a result (quantity above zero), never another's. */
/**
 * A supplier's own award lines at its prices. Where the run ranked bids on evaluated cost (non-price
 * criteria in money), the stored lines carry that cost: the supplier is told what it bid, not the
 * buyer's evaluation (priceBeforeCriteria), and `evaluated` is the total the engine compared.
 */
export function ownLines(
	result: Pick<AwardResult, 'awards'> | null | undefined,
	supplierName: string,
	problem?: AwardProblem
): Pick<AwardLine, 'item' | 'quantity' | 'unitPrice' | 'cost'>[] {
	return (result?.awards ?? [])
		.filter((a) => a.supplier === supplierName && a.quantity > 0)
		.map((line) => {
			const { item, quantity, unitPrice, cost } = line;
			if (!problem) return { item, quantity, unitPrice, cost };
			const priced = priceBeforeCriteria(problem, line);
			return priced === cost
				? { item, quantity, unitPrice, cost }
				: { item, quantity, unitPrice: priced / quantity, cost: priced };
		});
}

/** The supplier's evaluated total in a run that ranked bids on evaluated cost; null in any other run. */
export function ownEvaluatedTotal(
	problem: AwardProblem,
	result: Pick<AwardResult, 'awards'> | null | undefined,
	supplierName: string
): number | null {
	const totals = evaluatedSupplierTotals(problem, result?.awards ?? []);
	return totals?.find((t) => t.supplier === supplierName)?.evaluated ?? null;
}

const isoDate = (value: Date | string) =>
	String(value instanceof Date ? value.toISOString().slice(0, 10) : value);

/** A supplier's own result: its award lines once the event is awarded, or its regret; never another's. */
export async function myResult(user: SessionUser, eventId: string) {
	const access = await eventFor(user, eventId);
	if (access.view !== 'supplier')
		throw new RuleViolation('This is the supplier’s view of its result.', undefined, 403);
	const event = access.event;
	if (event.state !== 'awarded' || !event.awarded_run_id) return { status: 'pending' as const, lines: [] };
	const run = (await awards.findRun(db(), event.awarded_run_id))!;
	const notice = await awards.findSupplierNotice(db(), run.id, user.organisationId);
	const lines = ownLines(run.result, user.organisationName, run.problem);
	const own = lines.length
		? (
				await ownCurrencyAwards(event, run, now(), {
					organisationId: user.organisationId,
					name: user.organisationName
				})
			).get(user.organisationName)
		: undefined;
	return {
		/** Its award in its own bid currency, when that is not the event's. */
		ownCurrency: own ?? null,
		status: lines.length ? ('awarded' as const) : ('regret' as const),
		lines,
		currency: event.currency,
		total: lines.reduce((a, l) => a + l.cost, 0),
		/** What the buyer compared: its price plus the published criteria in money (null: price only). */
		evaluatedTotal: lines.length ? ownEvaluatedTotal(run.problem, run.result, user.organisationName) : null,
		/** The round of bids the award used (1: the bids up to the deadline). */
		round: run.round,
		noticeSentAt: notice?.sent_at?.toISOString() ?? null,
		standstillEndsOn: notice ? isoDate(notice.standstill_ends_on) : null
	};
}

/** Runs awaiting sign-off in the approver's organisation, oldest first. */
export async function awaitingSignoff(user: SessionUser) {
	const rows = await awards.listAwaitingSignoff(db(), user.organisationId);
	return rows.map((r) => ({
		runId: r.run_id,
		number: r.number,
		plan: r.plan_name,
		event: `${r.reference} · ${r.title}`,
		submittedAt: r.submitted_at.toISOString(),
		timeZone: r.time_zone,
		submittedBy: r.submitted_by
	}));
}
