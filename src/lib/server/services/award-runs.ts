// Award runs: a run snapshots the open bids (landed cost where the buyer set freight and duty adders) and
// the plan's rules into an award problem, stores it with its SHA-256 and queues its solve (pg-boss queue
// "award-run", sent in the same transaction as the run row: a run is queued with its job or not at all).
import { parseProblem, type AwardProblem, type AwardRule } from '$lib/award/core/problem';
import type { Adjustment } from '$lib/evaluation/criteria';
import { withCriteria } from '$lib/evaluation/apply-criteria';
import { namesById, rulesBySupplierName } from '$lib/plan-suppliers';
import type { SessionUser } from '../auth/session-user';
import { now } from '../clock';
import type { RunExclusion } from '../db/abnormally-low';
import * as awards from '../db/awards';
import { visibleBids, type VisibleBid } from '../db/bids';
import { listRates } from '../db/currencies';
import { convertPrice, rateFor, type EventRate } from '$lib/currencies';
import {
	listInvitations,
	listItems,
	lockEvent,
	setEventState,
	type EventRow,
	type InvitationRow,
	type ItemRow
} from '../db/events';
import { db, type Db } from '../db/knex';
import type { ManualChange, RunRow, RunView } from '../db/tables';
import { QUEUES, sendJob } from '../jobs/queue';
import { appendTrail, canonicalJson, sha256 } from '../trail';
import { exclusionsForRun, withoutExcluded } from './abnormally-low';
import { buyerOnly, invitedSuppliers, staffEvent } from './award-plans';
import { runAdjustments } from './criteria';
import { RuleViolation } from './errors';
import { effectiveState } from './events';
import { latestOpenedRound } from './rounds';

export interface AwardRunJob {
	runId: string;
}

export const RUN_OPTIONS = { timeLimit: 60, gap: 1e-4, explain: true };

const UUID = /^[0-9a-f-]{36}$/i;
const num = (v: string | null) => (v === null ? 0 : Number(v));

/** Six decimals: landed prices are sums of decimal texts, and the float noise must not reach the hash. */
const round = (n: number) => Math.round(n * 1e6) / 1e6;

/**
 * The event's bids (withdrawn ones left out) at landed cost: each unit price, price break and bundle
 * carries the item's freight and duty adders (landed = price + freight + duty per unit); suppliers carry
 * the buyer's tags of their invitation; the rules come as they are, suppliers named as in the refs.
 */
export function snapshotProblem(
	event: Pick<EventRow, 'currency'>,
	rows: {
		items: Pick<
			ItemRow,
			| 'ref'
			| 'quantity'
			| 'unit'
			| 'lot_ref'
			| 'baseline_unit_price'
			| 'freight_per_unit'
			| 'duty_per_unit'
			| 'order_multiple'
		>[];
		bids: VisibleBid[];
		invitations: Pick<InvitationRow, 'supplier_organisation_id' | 'tags'>[];
		/** The event's exchange rates: a bid in another currency is converted before the adders. */
		rates?: readonly EventRate[];
	},
	rules: AwardRule[],
	/** Money of the non-price criteria by supplier name (services/criteria.ts); none: prices as bid. */
	adjustments: ReadonlyMap<string, Adjustment> = new Map()
): AwardProblem {
	const { items, bids, invitations } = rows;
	const tagsOf = new Map(invitations.map((i) => [i.supplier_organisation_id, i.tags]));
	const adder = new Map(items.map((i) => [i.ref, num(i.freight_per_unit) + num(i.duty_per_unit)]));
	const adderOf = (item: string) => adder.get(item) ?? 0;
	const live = bids.filter((b) => b.source !== 'withdrawal');
	const rateOf = new Map(live.map((b) => [b.supplierName, bidRate(b, event.currency, rows.rates ?? [])]));
	// A price in the bid's currency, in the event's (six decimals), before the adders of the event currency.
	const inEventCurrency = (b: VisibleBid, price: string) =>
		convertPrice(Number(price), rateOf.get(b.supplierName)!);
	const problem = {
		currency: event.currency,
		items: items.map((i) => ({
			ref: i.ref,
			quantity: Number(i.quantity),
			unit: i.unit,
			...(i.lot_ref ? { lot: i.lot_ref } : {}),
			...(i.baseline_unit_price !== null ? { baselineUnitPrice: Number(i.baseline_unit_price) } : {}),
			...(i.order_multiple !== null ? { orderMultiple: Number(i.order_multiple) } : {})
		})),
		suppliers: live.map((b) => {
			const tags = tagsOf.get(b.supplierOrganisationId) ?? [];
			return {
				ref: b.supplierName,
				...(b.capacity !== null ? { capacity: Number(b.capacity) } : {}),
				...(tags.length ? { tags } : {}),
				...(b.currency !== event.currency
					? { bidCurrency: { code: b.currency, rate: rateOf.get(b.supplierName)! } }
					: {})
			};
		}),
		bids: live.flatMap((b) =>
			b.lines.map((l) => ({
				supplier: b.supplierName,
				item: l.item,
				unitPrice: round(inEventCurrency(b, l.unitPrice) + adderOf(l.item)),
				...(l.maxQuantity !== null ? { maxQuantity: Number(l.maxQuantity) } : {}),
				...(l.packSize !== null ? { packSize: Number(l.packSize) } : {}),
				...(l.priceBreaks.length
					? {
							priceBreaks: l.priceBreaks.map((p) => ({
								fromQuantity: Number(p.fromQuantity),
								unitPrice: round(inEventCurrency(b, p.unitPrice) + adderOf(l.item))
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
					inEventCurrency(b, offer.price) +
						offer.items.reduce((a, i) => a + adderOf(i.item) * Number(i.quantity), 0)
				),
				items: offer.items.map((i) => ({ item: i.item, quantity: Number(i.quantity) }))
			}))
		),
		rules
	} as AwardProblem;
	return withCriteria(problem, adjustments, adderOf);
}

/** The fixed rate of a bid's currency; a bid in a currency the event does not allow cannot be run. */
function bidRate(bid: VisibleBid, eventCurrency: string, rates: readonly EventRate[]): number {
	const rate = rateFor(bid.currency, eventCurrency, rates);
	if (rate === undefined)
		throw new RuleViolation(
			`${bid.supplierName}'s bid is in ${bid.currency}, which has no rate on this event.`,
			undefined,
			422
		);
	return rate;
}

/** Queues a run of a plan: the problem is fixed now, the solve happens in a worker process. */
export async function startRun(user: SessionUser, planId: string, eventId?: string): Promise<RunRow> {
	const plan = UUID.test(planId) ? await awards.findPlan(db(), planId) : undefined;
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
	// The latest revision of each supplier among the opened rounds: a round still open stays sealed.
	const at = now();
	const [items, allBids, invitations, rates, round] = await Promise.all([
		listItems(db(), event.id),
		visibleBids(db(), event.id, event.organisation_id, at),
		listInvitations(db(), event.id),
		listRates(db(), event.id),
		latestOpenedRound(db(), event.id, at)
	]);
	// Lines and bids the buyer excluded (abnormally low) stay out of the problem; the run records them.
	const excluded = await exclusionsForRun(event.id, namesById(invitedSuppliers(invitations)));
	const bids = withoutExcluded(allBids, excluded.standing);
	// The plan names suppliers by organisation id, the engine by name (snapshotProblem's refs).
	const named = rulesBySupplierName(plan.rules, namesById(invitedSuppliers(invitations)));
	if (!named.ok)
		throw new RuleViolation(`The plan does not fit the bids: ${named.problems.join('; ')}`, undefined, 422);
	const adjustments = await runAdjustments(event.id, bids);
	const problem = snapshotProblem(event, { items, bids, invitations, rates }, named.rules, adjustments);
	const parsed = parseProblem(problem);
	if (!parsed.ok)
		throw new RuleViolation(
			`The plan does not fit the bids: ${parsed.problems.slice(0, 5).join('; ')}`,
			undefined,
			422
		);
	return queueRun(user, event, { id: plan.id, name: plan.name }, problem, undefined, {
		excluded: excluded.recorded,
		round
	});
}

/**
 * Stores a run of a plan with its problem fixed, and queues its solve, in one transaction with its trail
 * entry. An adjusted run names the run it was changed from and carries the changes.
 */
export async function queueRun(
	user: SessionUser,
	event: EventRow,
	plan: { id: string; name: string },
	problem: AwardProblem,
	adjusted?: { from: RunView; changes: ManualChange[] },
	/** What the run was built without (abnormally low, excluded), and the round whose bids it holds. */
	basis: { excluded?: RunExclusion[]; round?: number } = {}
): Promise<RunRow> {
	const problemHash = sha256(canonicalJson(problem));
	// An adjusted run keeps the round of the run it was changed from, and its problem that run's bids.
	const round = basis.round ?? adjusted?.from.round ?? 1;
	const excluded = basis.excluded ?? [];
	return db().transaction(async (trx) => {
		const locked = (await lockEvent(trx, event.id))!;
		if (locked.state === 'awarded') throw new RuleViolation('The event is awarded already.', undefined, 409);
		const number = await awards.nextRunNumber(trx, event.id);
		const run = await awards.insertRun(trx, {
			eventId: event.id,
			planId: plan.id,
			number,
			planName: plan.name,
			problem,
			problemSha256: problemHash,
			options: RUN_OPTIONS,
			createdBy: user.id,
			round,
			...(adjusted ? { adjustedFrom: adjusted.from.id, adjustments: adjusted.changes } : {}),
			...(excluded.length ? { excluded } : {})
		});
		if (locked.state === 'closed' || (locked.state === 'open' && effectiveState(locked) === 'closed'))
			await setEventState(trx, event.id, 'in_evaluation');
		await appendTrail(trx, {
			eventId: event.id,
			actor: user,
			action: adjusted ? 'adjusted award run queued' : 'award run queued',
			detail: {
				run: run.id,
				number,
				plan: plan.name,
				round,
				problemSha256: problemHash,
				options: RUN_OPTIONS,
				...(adjusted ? { adjustedFrom: adjusted.from.number, changes: adjusted.changes } : {}),
				...(excluded.length ? { excluded } : {})
			}
		});
		await sendJob(trx, QUEUES.awardRun, { runId: run.id } satisfies AwardRunJob, {
			retryLimit: 2,
			retryDelay: 2,
			// As RUN_JOB_EXPIRY_SECONDS in jobs/award-runs.ts: a dead worker's job goes to another worker then.
			expireInSeconds: 1800
		});
		return run;
	});
}

/** A run the user may see, read by `read`; given `eventId` (the address's event), a run of another event is a 404. */
async function visibleRun<R extends RunView>(
	user: SessionUser,
	runId: string,
	eventId: string | undefined,
	read: (db: Db, id: string) => Promise<R | undefined>
): Promise<{ run: R; event: EventRow }> {
	if (!UUID.test(runId)) throw new RuleViolation('There is no such run.', undefined, 404);
	const run = await read(db(), runId);
	if (!run || (eventId !== undefined && run.event_id !== eventId))
		throw new RuleViolation('There is no such run.', undefined, 404);
	const event = await staffEvent(user, run.event_id);
	return { run, event };
}

/** The whole run, its problem snapshot included (the export, the sign-off's notices, `?problem=1`). */
export const findRun = (user: SessionUser, runId: string, eventId?: string) =>
	visibleRun(user, runId, eventId, awards.findRun);

/** The same, as the pages and the API show it: without the problem's items and bids (RunView). */
export const findRunView = (user: SessionUser, runId: string, eventId?: string) =>
	visibleRun(user, runId, eventId, awards.findRunView);

export async function listRuns(user: SessionUser, eventId: string): Promise<RunView[]> {
	await staffEvent(user, eventId);
	return awards.listRuns(db(), eventId);
}

/** Some runs of an event, by id: what the award page polls while they are queued or running. */
export async function runsById(user: SessionUser, eventId: string, ids: string[]): Promise<RunView[]> {
	const wanted = ids.filter((id) => UUID.test(id)).slice(0, 50);
	await staffEvent(user, eventId);
	return wanted.length ? awards.listRunsById(db(), eventId, wanted) : [];
}

export async function cancelRun(user: SessionUser, runId: string, eventId?: string): Promise<void> {
	const { run } = await findRun(user, runId, eventId);
	if (user.role !== 'buyer') throw new RuleViolation('Only buyers cancel runs.', undefined, 403);
	if (!['queued', 'running'].includes(run.status))
		throw new RuleViolation('The run has ended already.', undefined, 409);
	await db().transaction(async (trx) => {
		// A queued run ends here; a running one ends when its worker sees the flag (within a second).
		const ended = await awards.requestRunCancel(trx, runId, now());
		await appendTrail(trx, {
			eventId: run.event_id,
			actor: user,
			action: ended ? 'award run cancelled' : 'award run cancel requested',
			detail: { run: run.id, number: run.number }
		});
	});
}
