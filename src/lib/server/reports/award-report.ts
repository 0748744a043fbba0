// The award report's contents, for the file: what a run awaiting sign-off or approved decided and how it
// got there, gathered once and written as a PDF (award-report-pdf.ts) or a workbook (award-report-sheet.ts).
// Reading it records nothing in the trail: no read does, and the report names the trail head it saw, so
// the file can be checked against the trail afterwards.
import { evaluatedSupplierTotals } from '$lib/evaluation/apply-criteria';
import type { SupplierTotal, AwardLine } from '$lib/award/core/result';
import { formatQuantity } from '$lib/format';
import type { SessionUser } from '../auth/session-user';
import { now } from '../clock';
import { runExclusions, type RunExclusion } from '../db/abnormally-low';
import * as awards from '../db/awards';
import {
	isSubmittedOrApproved,
	latestUsableRunOfPlan,
	listRunNotices,
	listRunSignoffs,
	userNames
} from '../db/award-report';
import type { EventState } from '../db/events';
import { db } from '../db/knex';
import type { ManualChange } from '../db/tables';
import { findRun } from '../services/award-runs';
import { runJson } from '../services/award-views';
import { RuleViolation } from '../services/errors';
import { staffTabulation } from '../services/tabulation';
import { trailHead } from '../trail';
import { ownCurrencyAwards, type OwnAward } from '../services/currencies';

export const REPORT_CAUTION =
	'Decision support, not a legal award; standstill and time limits are local law — take advice from counsel.';

export interface ReportBidder {
	name: string;
	revision: number;
	submittedAt: Date;
	withdrawn: boolean;
	itemsBid: number;
	/** The bid's landed total over the items it prices, each at its whole quantity, at its own prices. */
	total: number;
	awardedLines: number;
	awardedCost: number;
	/** The bidder's own currency when not the event's: its awarded cost there, at the fixed rate. */
	ownCurrency?: { code: string; rate: number; source: string; rateDate: string; awardedCost: number };
}

export interface ReportRule {
	index: number;
	text: string;
	/** The rule's cost with every other rule kept; null when not worked out. */
	cost: number | null;
	costOnTopOfEarlier: number | null;
	runningTotal: number | null;
	tolerance: number | null;
}

export interface ReportSignoff {
	submittedBy: string;
	submittedAt: Date;
	justification: string | null;
	boundHash: string;
	decision: 'approve' | 'return' | null;
	decidedBy: string | null;
	decidedAt: Date | null;
	comment: string | null;
	supersededAt: Date | null;
	supersededReason: string | null;
}

export interface ReportNotice {
	supplier: string;
	kind: 'award' | 'regret';
	status: 'queued' | 'sent';
	queuedAt: Date;
	sentAt: Date | null;
	/** YYYY-MM-DD, a calendar date of the standstill rule (confirm locally). */
	standstillEndsOn: string;
}

export interface AwardReport {
	generatedAt: Date;
	event: {
		id: string;
		reference: string;
		title: string;
		currency: string;
		incoterm: string;
		deliveryPlace: string;
		deadline: Date;
		openedAt: Date | null;
		timeZone: string;
		state: EventState;
		items: number;
	};
	run: {
		id: string;
		number: number;
		plan: string;
		createdBy: string;
		finishedAt: Date | null;
		outcome: string;
		method: string;
		gap: number | null;
		approved: boolean;
		problemSha256: string;
		resultSha256: string | null;
		solverVersion: string | null;
		adjustedFrom: { id: string; number: number } | null;
		/** The round whose bids the run used (each supplier's latest revision of rounds 1 to it). */
		round?: number;
	};
	totals: {
		/** What the award minimised: the evaluated cost where the run carries criteria money. */
		totalCost: number | null;
		/** The award at the suppliers' own prices, where the run minimised evaluated cost; else null. */
		priceTotal: number | null;
		baselineCost: number | null;
		/** Against the baseline at the suppliers' prices (the price total where there is one). */
		savings: number | null;
		/** Savings over the baseline (0.12 for 12%); null without a baseline. */
		savingsShare: number | null;
	};
	bidders: ReportBidder[];
	rules: ReportRule[];
	/** Whether the rule costs were worked out (they come after the allocation, by their own job). */
	ruleCostsKnown: boolean;
	supplierTotals: SupplierTotal[];
	/** Each awarded supplier's price and evaluated cost, where the run's problem carries criteria money. */
	evaluatedCosts: { supplier: string; price: number; evaluated: number }[] | null;
	awards: AwardLine[];
	uncoveredItems: { item: string; reason: string }[];
	lowestCost:
		| { sameRun: true }
		| { sameRun: false; runId: string; number: number; totalCost: number; difference: number; share: number }
		| null;
	changes: ManualChange[];
	/** Lines or whole bids excluded as abnormally low that the run's problem was built without. */
	excluded?: RunExclusion[];
	signoffs: ReportSignoff[];
	notices: ReportNotice[];
	trailHead: { seq: number; hash: string } | null;
}

const REPORT_ROLES = ['buyer', 'approver', 'auditor'];

/** A bidder in another currency: what the run awards it in that currency (0 when nothing). */
function ownCurrencyOf(
	award: OwnAward | undefined,
	bid: { code: string; rate: number } | undefined
): Pick<ReportBidder, 'ownCurrency'> {
	if (award)
		return {
			ownCurrency: {
				code: award.code,
				rate: award.rate,
				source: award.source,
				rateDate: award.rateDate,
				awardedCost: award.total
			}
		};
	return bid
		? { ownCurrency: { code: bid.code, rate: bid.rate, source: '', rateDate: '', awardedCost: 0 } }
		: {};
}

const calendarDate = (value: Date | string) =>
	String(value instanceof Date ? value.toISOString().slice(0, 10) : value);

/**
 * The award report of a run, for the buyers, approvers and auditors of the event's organisation (others
 * get the same 404 or 403 as for the run). Only a run awaiting sign-off or approved has one (409).
 */
export async function awardReport(user: SessionUser, runId: string, eventId?: string): Promise<AwardReport> {
	const { run, event } = await findRun(user, runId, eventId);
	if (!REPORT_ROLES.includes(user.role))
		throw new RuleViolation(
			'The award report is for the buying organisation’s buyers, approvers and auditors.',
			undefined,
			403
		);
	if (!(await isSubmittedOrApproved(db(), run.id)))
		throw new RuleViolation(
			`Run ${run.number} is neither awaiting sign-off nor approved: the award report is made once a run is submitted for sign-off.`,
			undefined,
			409
		);
	const plans = await awards.listPlans(db(), event.id);
	const lowestPlan = plans.find((p) => p.lowest_cost);
	const [signoffs, notices, tabulation, lowestRunId, names, adjustedFrom, excluded] = await Promise.all([
		listRunSignoffs(db(), run.id),
		listRunNotices(db(), run.id),
		// The bidders as the run saw them: its own round's bids, not a later round's.
		staffTabulation(user, event.id, { round: run.round }),
		lowestPlan ? latestUsableRunOfPlan(db(), lowestPlan.id) : undefined,
		userNames(db(), [run.created_by]),
		run.adjusted_from ? awards.findRunView(db(), run.adjusted_from) : undefined,
		runExclusions(db(), run.id)
	]);
	const ownAwards = await ownCurrencyAwards(event, run, now());
	const lowestRun =
		lowestRunId && lowestRunId !== run.id ? await awards.findRunView(db(), lowestRunId) : undefined;
	// The head and the report's time are read together, last: the report shows the trail as it then stood.
	const [head, generatedAt] = [await trailHead(db(), event.id), now()];

	const json = runJson(run);
	const result = json.result;
	const totalCost = result?.totalCost ?? null;
	const supplierTotals = result?.supplierTotals ?? [];
	const awarded = (result?.awards ?? []).filter((l) => l.quantity > 0);
	// A run on evaluated cost (criteria in money) stores evaluated costs: its savings are at the prices.
	const evaluatedCosts = evaluatedSupplierTotals(run.problem, awarded);
	const priceTotal = evaluatedCosts ? evaluatedCosts.reduce((sum, t) => sum + t.price, 0) : null;
	const baselineCost = result?.baselineCost ?? null;
	const savings =
		baselineCost === null
			? null
			: priceTotal === null
				? (result?.savings ?? null)
				: baselineCost - priceTotal;
	const bySupplier = new Map(supplierTotals.map((t) => [t.supplier, t]));
	const lowestTotal = lowestRun?.result?.totalCost ?? null;

	return {
		generatedAt,
		event: {
			id: event.id,
			reference: event.reference,
			title: event.title,
			currency: event.currency,
			incoterm: event.incoterm,
			deliveryPlace: event.delivery_place,
			deadline: event.deadline,
			openedAt: event.opened_at,
			timeZone: event.time_zone,
			state: event.state,
			items: tabulation.sealed ? 0 : tabulation.tab.items.length
		},
		run: {
			id: run.id,
			number: run.number,
			plan: run.plan_name,
			createdBy: names.get(run.created_by) ?? `user ${run.created_by}`,
			finishedAt: run.finished_at,
			outcome: result?.status ?? run.status,
			method: result?.method ?? '',
			gap: result?.gap ?? null,
			approved: event.awarded_run_id === run.id,
			problemSha256: json.problemSha256,
			resultSha256: json.resultSha256,
			solverVersion: run.solver_version,
			adjustedFrom:
				adjustedFrom && adjustedFrom.event_id === event.id
					? { id: adjustedFrom.id, number: adjustedFrom.number }
					: null,
			round: run.round ?? 1
		},
		totals: {
			totalCost,
			priceTotal,
			baselineCost,
			savings,
			savingsShare: savings !== null && baselineCost ? savings / baselineCost : null
		},
		bidders: tabulation.sealed
			? []
			: tabulation.tab.suppliers.map((s) => ({
					name: s.name,
					revision: s.revision,
					submittedAt: new Date(s.submittedAt),
					withdrawn: s.withdrawn,
					itemsBid: s.itemsBid,
					total: s.total,
					awardedLines: awarded.filter((l) => l.supplier === s.name).length,
					awardedCost: bySupplier.get(s.name)?.cost ?? 0,
					...ownCurrencyOf(ownAwards.get(s.name), s.bidCurrency)
				})),
		rules: json.rules.map((r) => {
			const cost = result?.ruleCosts?.find((c) => c.rule === r.index);
			return {
				index: r.index,
				text: r.text,
				cost: cost?.cost ?? null,
				costOnTopOfEarlier: cost?.costOnTopOfEarlier ?? null,
				runningTotal: cost?.runningTotal ?? null,
				tolerance: cost?.tolerance ?? null
			};
		}),
		ruleCostsKnown: Boolean(result?.ruleCosts),
		supplierTotals,
		evaluatedCosts,
		awards: awarded,
		uncoveredItems: result?.uncoveredItems ?? [],
		lowestCost:
			lowestRunId === run.id
				? { sameRun: true }
				: lowestRun && lowestTotal !== null && totalCost !== null
					? {
							sameRun: false,
							runId: lowestRun.id,
							number: lowestRun.number,
							totalCost: lowestTotal,
							difference: totalCost - lowestTotal,
							share: lowestTotal ? (totalCost - lowestTotal) / lowestTotal : 0
						}
					: null,
		changes: run.adjustments ?? [],
		excluded: excluded ?? [],
		signoffs: signoffs.map((s) => ({
			submittedBy: s.submitted_by_name ?? `user ${s.submitted_by}`,
			submittedAt: s.submitted_at,
			justification: s.justification,
			boundHash: s.bound_hash.trim(),
			decision: s.decision,
			decidedBy: s.decided_by === null ? null : (s.decided_by_name ?? `user ${s.decided_by}`),
			decidedAt: s.decided_at,
			comment: s.comment,
			supersededAt: s.superseded_at,
			supersededReason: s.superseded_reason
		})),
		notices: notices.map((n) => ({
			supplier: n.supplier_name,
			kind: n.kind,
			status: n.status,
			queuedAt: n.queued_at,
			sentAt: n.sent_at,
			standstillEndsOn: calendarDate(n.standstill_ends_on)
		})),
		trailHead: head
	};
}

/** Whether the run has an award report (awaiting sign-off or approved), for the run page's links. */
export async function hasAwardReport(runId: string): Promise<boolean> {
	return isSubmittedOrApproved(db(), runId);
}

/** A manual change in words, as the report lists it. */
export function describeChange(change: ManualChange): string {
	if (change.kind === 'lock') return `${change.supplier} gets all of ${change.item}`;
	if (change.kind === 'exclude') return `${change.supplier} gets none of ${change.item}`;
	const quantity = change.quantity === undefined ? 'all' : formatQuantity(change.quantity);
	return `${quantity} of ${change.item} moved from ${change.supplier} to ${change.to ?? '?'}`;
}
