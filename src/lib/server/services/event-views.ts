// What an event looks like to each side, as plain JSON for pages and the API. Suppliers never get the
// names or the number of other invited suppliers.
import { listRates } from '../db/currencies';
import { isStaff } from '$lib/roles';
import type { SessionUser } from '../auth/session-user';
import { listEventSignoffs, listRunOutlines } from '../db/awards';
import { listSubmissions, type VisibleBid } from '../db/bids';
import {
	itemFigures,
	listAmendments,
	listInvitations,
	listItems,
	listOrganisationEvents,
	listInvitedEvents,
	listQuestions,
	listQuestionsForSupplier,
	type EventRow,
	type ItemRow
} from '../db/events';
import { db } from '../db/knex';
import { now } from '../clock';
import type { SheetEvent } from '../sheets/bid-sheet';
import { listCriteria } from '../db/criteria';
import { RuleViolation } from './errors';
import { effectiveState, eventFor, sheetEvent } from './events';

export function eventJson(event: EventRow) {
	return {
		id: event.id,
		reference: event.reference,
		title: event.title,
		description: event.description,
		currency: event.currency,
		incoterm: event.incoterm,
		deliveryPlace: event.delivery_place,
		deadline: event.deadline.toISOString(),
		timeZone: event.time_zone,
		bidValidityDays: event.bid_validity_days,
		allowPriceBreaks: event.allow_price_breaks,
		allowCapacity: event.allow_capacity,
		allowBundles: event.allow_bundles,
		allowPackSizes: event.allow_pack_sizes,
		state: effectiveState(event),
		publishedAt: event.published_at?.toISOString() ?? null,
		openedAt: event.opened_at?.toISOString() ?? null,
		serverTime: now().toISOString()
	};
}
export type EventJson = ReturnType<typeof eventJson>;

export function itemJson(item: ItemRow) {
	const num = (v: string | null) => (v === null ? null : Number(v));
	return {
		ref: item.ref,
		description: item.description,
		lot: item.lot_ref,
		quantity: Number(item.quantity),
		unit: item.unit,
		baselineUnitPrice: num(item.baseline_unit_price),
		freightPerUnit: num(item.freight_per_unit),
		dutyPerUnit: num(item.duty_per_unit),
		orderMultiple: num(item.order_multiple)
	};
}
export type ItemJson = ReturnType<typeof itemJson>;

export async function eventsFor(user: SessionUser) {
	const rows = isStaff(user.role)
		? await listOrganisationEvents(db(), user.organisationId)
		: await listInvitedEvents(db(), user.organisationId);
	return rows.map((e) => ({
		...eventJson(e),
		items: e.items,
		...(isStaff(user.role) ? { invited: e.invited } : {})
	}));
}

/** Items without the buyer's baseline prices for suppliers (those are the buyer's own estimates). */
export async function itemsFor(user: SessionUser, id: string): Promise<ItemJson[]> {
	const { view } = await eventFor(user, id);
	const items = (await listItems(db(), id)).map(itemJson);
	return view === 'staff' ? items : items.map((i) => ({ ...i, baselineUnitPrice: null }));
}

/** The event as its bid sheet describes it (terms and items), for whoever may see the event. */
export async function eventSheet(user: SessionUser, id: string): Promise<SheetEvent> {
	const { event } = await eventFor(user, id);
	return sheetEvent(
		event,
		await listItems(db(), id),
		await listRates(db(), id),
		await listCriteria(db(), id)
	);
}

/**
 * What an award plan's rules may name: the items, lots and the invited suppliers' tags (the suppliers
 * themselves, by id and name, come from award-plans' planSuppliers).
 */
export async function planRefs(user: SessionUser, id: string) {
	const { view } = await eventFor(user, id);
	if (view !== 'staff')
		throw new RuleViolation('Award plans are for the buying organisation.', undefined, 403);
	const [items, invitations] = await Promise.all([listItems(db(), id), listInvitations(db(), id)]);
	return {
		items: items.map((i) => i.ref),
		lots: [...new Set(items.map((i) => i.lot_ref).filter((l): l is string => Boolean(l)))],
		tags: [...new Set(invitations.flatMap((i) => i.tags))].sort()
	};
}

/**
 * What every tab of an event shows at its top: the event and what the user may do with it. The tabs that
 * show invitations, questions, amendments or the opening record load eventDetail themselves, so the
 * others (bids, award, runs) neither read nor ship them.
 */
export async function eventHeader(user: SessionUser, id: string) {
	const { event, view, canEdit } = await eventFor(user, id);
	return { view, canEdit, event: eventJson(event) };
}

/**
 * The figures at the top of an event's pages, for its buying organisation: items and lots, the
 * baseline's total, who has bid out of who is invited (names and times only: nothing derived from a
 * bid's contents, so it may show before the opening), and the cheapest finished run and the run awaiting
 * or given sign-off. Staff only.
 */
export async function eventSummary(user: SessionUser, id: string) {
	const { view } = await eventFor(user, id);
	if (view !== 'staff')
		throw new RuleViolation('The summary is for the buying organisation.', undefined, 403);
	// Counted in the database: this runs on every tab of the event, and an event may have 10,000 items.
	const [figures, invitations, submissions, runs, signoffs] = await Promise.all([
		itemFigures(db(), id),
		listInvitations(db(), id),
		listSubmissions(db(), id),
		listRunOutlines(db(), [id]),
		listEventSignoffs(db(), [id])
	]);
	const finished = runs.filter((r) => r.status === 'done' && r.total_cost !== null);
	const cheapest = finished.reduce<(typeof finished)[number] | null>(
		(best, r) => (best === null || r.total_cost! < best.total_cost! ? r : best),
		null
	);
	const signoff = signoffs.filter((s) => !s.superseded_at && s.decision !== 'return').at(-1);
	const signed = signoff ? runs.find((r) => r.id === signoff.run_id) : undefined;
	return {
		items: figures.items,
		lots: figures.lots,
		baselineTotal: figures.baselineTotal,
		invited: invitations.length,
		bidders: submissions.filter((s) => s.latest_source !== 'withdrawal').length,
		runs: finished.length,
		cheapestRun: cheapest ? { id: cheapest.id, number: cheapest.number, total: cheapest.total_cost! } : null,
		signedRun:
			signed && signed.total_cost !== null
				? { id: signed.id, number: signed.number, total: signed.total_cost, decision: signoff!.decision }
				: null
	};
}
export type EventSummaryJson = Awaited<ReturnType<typeof eventSummary>>;

export async function eventDetail(user: SessionUser, id: string) {
	const { event, view, canEdit } = await eventFor(user, id);
	const amendments = (await listAmendments(db(), id)).map((a) => ({
		number: a.number,
		summary: a.summary,
		changes: a.detail,
		at: a.created_at.toISOString()
	}));
	if (view === 'staff') {
		const [invitations, questions] = await Promise.all([listInvitations(db(), id), listQuestions(db(), id)]);
		return {
			view,
			canEdit,
			event: eventJson(event),
			openingRecord: event.opening_record,
			amendments,
			invitations: invitations.map((i) => ({
				supplierOrganisationId: i.supplier_organisation_id,
				supplierName: i.supplier_name,
				tags: i.tags,
				invitedAt: i.invited_at.toISOString()
			})),
			questions: questions.map((q) => ({
				id: q.id,
				text: q.text,
				askedAt: q.asked_at.toISOString(),
				publishedQuestion: q.published_question,
				answer: q.answer,
				answeredAt: q.answered_at?.toISOString() ?? null
			}))
		};
	}
	const questions = await listQuestionsForSupplier(db(), id, user.organisationId);
	return {
		view,
		canEdit: false,
		event: eventJson(event),
		openingRecord: null,
		amendments,
		invitations: [],
		// Own questions as asked; everyone else's only as published with the answer, never who asked.
		questions: questions.map((q) =>
			q.supplier_organisation_id === user.organisationId
				? {
						id: q.id,
						text: q.text,
						askedAt: q.asked_at.toISOString(),
						publishedQuestion: q.published_question,
						answer: q.answer,
						answeredAt: q.answered_at?.toISOString() ?? null
					}
				: {
						id: q.id,
						text: null,
						askedAt: null,
						publishedQuestion: q.published_question,
						answer: q.answer,
						answeredAt: q.answered_at?.toISOString() ?? null
					}
		)
	};
}
export type EventDetail = Awaited<ReturnType<typeof eventDetail>>;

export function bidJson(bid: VisibleBid) {
	const num = (v: string | null) => (v === null ? null : Number(v));
	return {
		supplierOrganisationId: bid.supplierOrganisationId,
		supplierName: bid.supplierName,
		revision: bid.revision,
		round: bid.round,
		submittedAt: bid.submittedAt.toISOString(),
		withdrawn: bid.source === 'withdrawal',
		capacity: num(bid.capacity),
		currency: bid.currency,
		lines: bid.lines.map((l) => ({
			item: l.item,
			unitPrice: Number(l.unitPrice),
			maxQuantity: num(l.maxQuantity),
			packSize: num(l.packSize),
			priceBreaks: l.priceBreaks.map((b) => ({
				fromQuantity: Number(b.fromQuantity),
				unitPrice: Number(b.unitPrice)
			}))
		})),
		bundles: bid.bundles.map((b) => ({
			ref: b.ref,
			price: Number(b.price),
			items: b.items.map((i) => ({ item: i.item, quantity: Number(i.quantity) }))
		})),
		answers: bid.answers
	};
}
