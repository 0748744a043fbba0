// Rounds of bids after the opening: the buyer invites some or all bidders to revise by a new deadline,
// each with its own feedback (none, its rank, or its distance from the best price; per item or lot).
// Revised bids are sealed from the buying side until the round's deadline, in the database
// (visible_bid_revisions). A run uses each supplier's latest revision among the opened rounds.
import {
	feedbackText,
	roundFeedback,
	type FeedbackBid,
	type FeedbackEntry,
	type FeedbackKind,
	type FeedbackPer
} from '$lib/round-feedback';
import { priceAtQuantity } from '$lib/award/core/prices';
import { formatInZone, fromLocalInput, LocalTimeError } from '$lib/time';
import type { SessionUser } from '../auth/session-user';
import { now } from '../clock';
import { visibleBids } from '../db/bids';
import { standingExclusions } from '../db/abnormally-low';
import { listRates } from '../db/currencies';
import { invitedSupplierUsers, listItems, lockEvent, type EventRow } from '../db/events';
import { db, type Db } from '../db/knex';
import {
	insertRound,
	listRounds,
	listRoundSuppliers,
	ownRoundInvitations,
	type RoundRow
} from '../db/rounds';
import { enqueueMail, scheduleEventClose } from '../jobs/queue';
import { roundInvitationMail } from '../mail/templates';
import { appendTrail } from '../trail';
import { bidsInEventCurrency } from './currencies';
import { tabulate, type Tabulated } from '../tabulation';
import { RuleViolation } from './errors';
import { buyerEvent, buyerName, effectiveState, evaluationEvent, eventFor, eventMail } from './events';
import type { RequestContext } from './users';

export interface RoundRequest {
	/** Supplier organisation ids, each with a current bid. */
	suppliers: string[];
	/** Wall-clock time in the event's time zone, as a datetime-local field gives it… */
	deadlineLocal?: string;
	/** …or an instant in ISO 8601 with its offset (API clients), such as 2027-03-01T16:00:00Z. */
	deadline?: string;
	feedback: string;
	per: string;
}

const KINDS: FeedbackKind[] = ['none', 'rank', 'gap'];
const PERS: FeedbackPer[] = ['item', 'lot'];

const isOpenAt = (round: Pick<RoundRow, 'deadline'>, at: Date) => round.deadline.getTime() > at.getTime();
const when = (date: Date, zone: string) => `${formatInZone(date, zone)} (${zone})`;

/** The highest round whose bids are open to the buying side at `at` (1 when no later round has closed). */
export function openedRound(rounds: Pick<RoundRow, 'number' | 'deadline'>[], at: Date): number {
	return Math.max(1, ...rounds.filter((r) => !isOpenAt(r, at)).map((r) => r.number));
}

/** The same, read for an event: what a run states it used. */
export async function latestOpenedRound(from: Db, eventId: string, at = now()): Promise<number> {
	return openedRound(await listRounds(from, eventId), at);
}

/**
 * Why a run may not go to sign-off now, as far as rounds go: a round still open (its bids would come after
 * the award), or a run on an earlier round than the latest opened one (it was built on superseded bids).
 * Read through `from`, the transaction that holds the event.
 */
export async function roundBarToSignoff(
	from: Db,
	event: Pick<EventRow, 'id' | 'time_zone'>,
	runRound: number,
	at = now()
): Promise<string | undefined> {
	const rounds = await listRounds(from, event.id);
	const open = rounds.find((r) => isOpenAt(r, at));
	if (open)
		return `Round ${open.number} is open for bids until ${when(open.deadline, event.time_zone)}: submit a run for sign-off after it closes, run on its bids.`;
	const latest = openedRound(rounds, at);
	if (runRound < latest)
		return `This run used the bids of round ${runRound}; round ${latest}'s bids are open now. Run the plan again on them.`;
	return undefined;
}

/**
 * The round a supplier may bid in now: 1 while the event is open; after the opening, the open round it
 * is invited to. Anything else is refused with when bidding closed. Read through `from`, the transaction
 * that holds the event, so the answer stands until the bid is written.
 */
export async function biddingRound(
	from: Db,
	event: EventRow,
	supplierOrganisationId: string,
	at = now()
): Promise<number> {
	const state = effectiveState(event, at);
	if (state === 'open') return 1;
	if (state === 'draft') throw new RuleViolation('The event is not open for bids yet.', undefined, 409);
	// A later round is bidding on an event in evaluation: once it is submitted for sign-off, awarded or
	// cancelled, no round takes bids any more, whatever its deadline said.
	if (state !== 'closed' && state !== 'in_evaluation')
		throw new RuleViolation(
			'The event is no longer taking bids: it is awaiting sign-off, awarded or cancelled.',
			undefined,
			409
		);
	const invited = (await ownRoundInvitations(from, event.id, supplierOrganisationId)).at(-1);
	if (invited && isOpenAt(invited, at)) return invited.number;
	const closed = invited ?? event;
	throw new RuleViolation(
		`The bid deadline passed at ${when(closed.deadline, event.time_zone)}: bids can no longer be submitted, changed or withdrawn.`,
		undefined,
		409
	);
}

function localDeadline(local: string, timeZone: string): Date {
	if (!/^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}$/.test(local))
		throw new RuleViolation('Give a date and time for the round’s deadline.', 'deadlineLocal', 422);
	try {
		return fromLocalInput(local, timeZone);
	} catch (error) {
		if (error instanceof LocalTimeError) throw new RuleViolation(error.message, 'deadlineLocal', 422);
		throw error;
	}
}

function instant(iso: string): Date {
	const date = new Date(iso);
	if (
		!/^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}(:\d{2}(\.\d+)?)?(Z|[+-]\d{2}:\d{2})$/.test(iso) ||
		Number.isNaN(date.getTime())
	)
		throw new RuleViolation(
			'Give the round’s deadline as an ISO 8601 time with its offset, such as 2027-03-01T16:00:00Z.',
			'deadline',
			422
		);
	return date;
}

function parseRequest(event: EventRow, request: RoundRequest, at: Date) {
	const feedback = request.feedback as FeedbackKind;
	if (!KINDS.includes(feedback))
		throw new RuleViolation(
			'Choose the feedback: none, rank or distance from the best price.',
			'feedback',
			422
		);
	const per = (request.per || 'item') as FeedbackPer;
	if (!PERS.includes(per)) throw new RuleViolation('Give the feedback per item or per lot.', 'per', 422);
	const suppliers = [...new Set(request.suppliers.filter(Boolean))];
	if (!suppliers.length)
		throw new RuleViolation('Choose at least one supplier to invite to the new round.', 'suppliers', 422);
	const field = request.deadline ? 'deadline' : 'deadlineLocal';
	const deadline = request.deadline
		? instant(request.deadline)
		: localDeadline(request.deadlineLocal ?? '', event.time_zone);
	if (deadline.getTime() <= at.getTime())
		throw new RuleViolation(
			`The round’s deadline must be in the future: ${when(deadline, event.time_zone)} has passed.`,
			field,
			422
		);
	return { feedback, per, suppliers, deadline };
}

/**
 * Starts round N+1: who is invited, the deadline and each invited supplier's own feedback are fixed and
 * recorded together (the trail names the invited and the kind of feedback, never its values), the
 * opening is scheduled, and each invited supplier's users are mailed their own feedback.
 */
export async function startRound(
	actor: SessionUser,
	id: string,
	request: RoundRequest,
	context: RequestContext
): Promise<RoundRow> {
	await buyerEvent(actor, id);
	return db().transaction(async (trx) => {
		const event = (await lockEvent(trx, id))!;
		const at = now();
		if (!['closed', 'in_evaluation'].includes(effectiveState(event, at)) || !event.opened_at)
			throw new RuleViolation(
				event.state === 'open' || event.state === 'draft'
					? 'A new round starts only after the bids are opened.'
					: 'A new round can no longer start: the event is awaiting sign-off, awarded or cancelled.',
				undefined,
				409
			);
		const rounds = await listRounds(trx, id);
		const open = rounds.find((r) => isOpenAt(r, at));
		if (open)
			throw new RuleViolation(
				`Round ${open.number} is open until ${when(open.deadline, event.time_zone)}; start the next after it.`,
				undefined,
				409
			);
		const { feedback, per, suppliers, deadline } = parseRequest(event, request, at);
		const [items, bidsAsBid, rates] = await Promise.all([
			listItems(trx, id),
			visibleBids(trx, id, event.organisation_id, at),
			listRates(trx, id)
		]);
		// Ranks and distances compare prices in the event currency, at the fixed rates.
		const bids = bidsInEventCurrency(bidsAsBid, event.currency, rates);
		const priced = bids.filter((b) => b.source !== 'withdrawal');
		const nameOf = new Map(priced.map((b) => [b.supplierOrganisationId, b.supplierName]));
		const stranger = suppliers.find((s) => !nameOf.has(s));
		if (stranger)
			throw new RuleViolation(
				'Invite only suppliers with a current bid: one chosen has none (never bid, or withdrew).',
				'suppliers',
				422
			);
		const feedbackOf = roundFeedback(
			items.map((i) => ({ ref: i.ref, lot: i.lot_ref, quantity: Number(i.quantity) })),
			feedbackBids(items, priced, await standingExclusions(trx, id)),
			feedback,
			per
		);
		const number = Math.max(1, ...rounds.map((r) => r.number)) + 1;
		const round = await insertRound(
			trx,
			{ event_id: id, number, deadline, feedback, feedback_per: per, started_by: actor.id, started_at: at },
			suppliers.map((s) => ({ supplierOrganisationId: s, feedback: feedbackOf.get(s) ?? [] }))
		);
		await appendTrail(trx, {
			eventId: id,
			actor,
			action: `round ${number} started`,
			detail: {
				round: number,
				deadline: deadline.toISOString(),
				timeZone: event.time_zone,
				feedback,
				per,
				invited: suppliers.map((s) => nameOf.get(s)).sort()
			},
			at
		});
		// The close job, scheduled again for the round's deadline, records the round's opening.
		await scheduleEventClose(trx, id, deadline);
		const mail = await eventMail(trx, event, context.origin, await buyerName(trx, event));
		const users = await invitedSupplierUsers(trx, id);
		await enqueueMail(
			trx,
			users
				.filter((u) => suppliers.includes(u.organisation_id))
				.map((u) =>
					roundInvitationMail(u.email, mail, {
						number,
						deadline: when(deadline, event.time_zone),
						feedback: feedbackLines(feedbackOf.get(u.organisation_id) ?? [], per)
					})
				)
		);
		return round;
	});
}

/**
 * The bids feedback compares: each line at its unit price for the item's whole quantity (its all-units
 * price break, where reached, as the tabulation prices it), without the lines and bids the buyer excluded
 * as abnormally low (they compete with no one, and get no feedback of their own on what was excluded).
 */
export function feedbackBids(
	items: { ref: string; quantity: number | string }[],
	bids: {
		supplierOrganisationId: string;
		lines: {
			item: string;
			unitPrice: number | string;
			priceBreaks: { fromQuantity: number | string; unitPrice: number | string }[];
		}[];
	}[],
	exclusions: { supplier_organisation_id: string; item_ref: string | null }[]
): FeedbackBid[] {
	const quantity = new Map(items.map((i) => [i.ref, Number(i.quantity)]));
	const excluded = (supplier: string, item: string) =>
		exclusions.some(
			(e) => e.supplier_organisation_id === supplier && (e.item_ref === null || e.item_ref === item)
		);
	return bids.map((b) => ({
		supplier: b.supplierOrganisationId,
		lines: b.lines.flatMap((l) =>
			excluded(b.supplierOrganisationId, l.item) || !quantity.has(l.item)
				? []
				: [
						{
							item: l.item,
							unitPrice: priceAtQuantity(
								{
									unitPrice: Number(l.unitPrice),
									priceBreaks: l.priceBreaks.map((p) => ({
										fromQuantity: Number(p.fromQuantity),
										unitPrice: Number(p.unitPrice)
									}))
								},
								quantity.get(l.item)!
							)
						}
					]
		)
	}));
}

/** A supplier's own feedback as lines to read: "Item IT-1: 2nd lowest price". */
export function feedbackLines(entries: FeedbackEntry[], per: FeedbackPer): string[] {
	return entries.map((e) => `${per === 'lot' ? 'Lot or item' : 'Item'} ${e.ref}: ${feedbackText(e)}`);
}

export interface StaffRound {
	number: number;
	deadline: Date;
	open: boolean;
	openedAt: Date | null;
	feedback: FeedbackKind;
	per: FeedbackPer;
	startedAt: Date;
	invited: { id: string; name: string }[];
}

/** The rounds after the first, for the buying side: who is invited, deadlines; never the feedback values. */
export async function staffRounds(actor: SessionUser, id: string): Promise<StaffRound[]> {
	await evaluationEvent(actor, id);
	const [rounds, invited] = await Promise.all([listRounds(db(), id), listRoundSuppliers(db(), id)]);
	const at = now();
	return rounds.map((r) => ({
		number: r.number,
		deadline: r.deadline,
		open: isOpenAt(r, at),
		openedAt: r.opened_at,
		feedback: r.feedback,
		per: r.feedback_per,
		startedAt: r.started_at,
		invited: invited
			.filter((s) => s.round_id === r.id)
			.map((s) => ({ id: s.supplier_organisation_id, name: s.supplier_name }))
	}));
}

export interface SupplierRound {
	number: number;
	deadline: Date;
	open: boolean;
	feedback: FeedbackKind;
	per: FeedbackPer;
	lines: string[];
}

/** The rounds a supplier is invited to, each with its own feedback only. */
export async function supplierRounds(actor: SessionUser, id: string): Promise<SupplierRound[]> {
	const access = await eventFor(actor, id);
	if (access.view !== 'supplier')
		throw new RuleViolation('Only invited suppliers have rounds.', undefined, 403);
	const at = now();
	return (await ownRoundInvitations(db(), id, actor.organisationId)).map((r) => ({
		number: r.number,
		deadline: r.deadline,
		open: isOpenAt(r, at),
		feedback: r.feedback,
		per: r.feedback_per,
		lines: feedbackLines(r.own_feedback, r.feedback_per)
	}));
}

export interface RoundChange {
	supplierOrganisationId: string;
	supplierName: string;
	/** Landed totals of the bid in the earlier and the later round (null: no priced bid then). */
	before: number | null;
	after: number | null;
	/** The round of the later bid's revision: the later round when the supplier revised in it. */
	revisedIn: number | null;
	/** Lines whose landed unit price changed, at most LINES_SHOWN of them, and how many there are. */
	lines: { item: string; before: number | null; after: number | null }[];
	linesChanged: number;
}

const LINES_SHOWN = 50;

/**
 * Each supplier's bid in the latest opened round against the round before it: the totals and the lines
 * that changed (a supplier that did not revise keeps its earlier bid, so nothing changes). Null before a
 * second round has opened.
 */
export async function roundChanges(
	actor: SessionUser,
	id: string
): Promise<{ from: number; to: number; suppliers: RoundChange[] } | null> {
	const event = await evaluationEvent(actor, id);
	const at = now();
	const to = await latestOpenedRound(db(), id, at);
	if (to < 2) return null;
	const [items, after, before, rates] = await Promise.all([
		listItems(db(), id),
		visibleBids(db(), id, event.organisation_id, at, { round: to }),
		visibleBids(db(), id, event.organisation_id, at, { round: to - 1 }),
		listRates(db(), id)
	]);
	// Both rounds in the event currency at the fixed rates, as the tabulation compares them.
	const [later, earlier] = [after, before].map((bids) =>
		tabulate(items, bidsInEventCurrency(bids, event.currency, rates))
	) as [Tabulated, Tabulated];
	const width = (tab: Tabulated) => tab.suppliers.length;
	const priceAt = (tab: Tabulated, column: number, row: number) => {
		const price = column < 0 ? NaN : tab.prices[row * width(tab) + column]!;
		return Number.isNaN(price) ? null : price;
	};
	const ids = [...new Set([...later.suppliers, ...earlier.suppliers].map((s) => s.id))];
	return {
		from: to - 1,
		to,
		suppliers: ids.map((supplier) => {
			const a = later.suppliers.findIndex((s) => s.id === supplier);
			const b = earlier.suppliers.findIndex((s) => s.id === supplier);
			const [sa, sb] = [a < 0 ? undefined : later.suppliers[a], b < 0 ? undefined : earlier.suppliers[b]];
			const total = (s: typeof sa) => (s && !s.withdrawn && s.itemsBid ? s.total : null);
			const lines = items.flatMap((item, row) => {
				const [x, y] = [priceAt(earlier, b, row), priceAt(later, a, row)];
				return x === y ? [] : [{ item: item.ref, before: x, after: y }];
			});
			return {
				supplierOrganisationId: supplier,
				supplierName: (sa ?? sb)!.name,
				before: total(sb),
				after: total(sa),
				revisedIn: after.find((bid) => bid.supplierOrganisationId === supplier)?.round ?? null,
				lines: lines.slice(0, LINES_SHOWN),
				linesChanged: lines.length
			};
		})
	};
}
