// Abnormally low bids after the opening (EU Directive 2014/24/EU Art. 69): the screen of the opened bids
// ($lib/abnormally-low), the buyer's explanation requests and the answers, and exclusions of a line or a
// whole bid with a reason (undone with a reason too). Every step goes to the decision trail in its own
// transaction; a request is mailed to the supplier's users. Standing exclusions leave the award problem
// (startRun) and the run keeps them.
import type { SessionUser } from '../auth/session-user';
import { now } from '../clock';
import * as low from '../db/abnormally-low';
import type { BidExclusionRow, RunExclusion } from '../db/abnormally-low';
import { invitedSupplierUsers, lockEvent, type EventRow } from '../db/events';
import { db } from '../db/knex';
import { enqueueMail } from '../jobs/queue';
import { notice } from '../mail/templates';
import { describeFlag, lowPriceFlags } from '../low-price-flags';
import type { Tabulated } from '../tabulation';
import { appendTrail } from '../trail';
import { RuleViolation } from './errors';
import { buyerName, eventFor, eventMail } from './events';
import { staffTabulation } from './tabulation';
import type { RequestContext } from './users';

export { describeFlag, lowPriceFlags };

export const QUESTION_MAX = 4000;
export const ANSWER_MAX = 8000;
export const REASON_MAX = 2000;

async function openedTabulation(user: SessionUser, eventId: string) {
	const found = await staffTabulation(user, eventId);
	if (found.sealed)
		throw new RuleViolation(
			'Bids are sealed until the deadline: the screen runs after the opening.',
			undefined,
			409
		);
	return found;
}

/** What the Bids tab shows of the screen: how many flags, and the bids' totals that are flagged. */
export function lowPriceSummary(tab: Tabulated, currency: string) {
	const flags = lowPriceFlags(tab);
	return {
		lines: flags.filter((f) => f.item !== null).length,
		totals: flags
			.filter((f) => f.item === null)
			.map((f) => ({ supplier: f.supplier, text: describeFlag(f, currency) }))
	};
}

/** Everything the abnormally-low page shows: flags, requests with answers, exclusions. */
export async function lowPriceReview(user: SessionUser, eventId: string) {
	const { event, tab } = await openedTabulation(user, eventId);
	const [inquiries, exclusions] = await Promise.all([
		low.listInquiries(db(), eventId),
		low.listExclusions(db(), eventId)
	]);
	const nameOf = new Map(tab.suppliers.map((s) => [s.id, s.name]));
	const supplierName = (id: string) => nameOf.get(id) ?? 'a supplier';
	return {
		event,
		flags: lowPriceFlags(tab).map((f) => ({ ...f, text: describeFlag(f, event.currency) })),
		suppliers: tab.suppliers.filter((s) => !s.withdrawn).map((s) => ({ id: s.id, name: s.name })),
		items: tab.items.map((i) => i.ref),
		inquiries: inquiries.map((q) => ({ ...q, supplier: supplierName(q.supplier_organisation_id) })),
		exclusions: exclusions.map((x) => ({ ...x, supplier: supplierName(x.supplier_organisation_id) }))
	};
}

const text = (value: unknown) => (typeof value === 'string' ? value.trim() : '');

function longText(value: unknown, field: string, label: string, max: number, what: string): string {
	const t = text(value);
	if (!t) throw new RuleViolation(`${label}: ${what}`, field, 422);
	if (t.length > max)
		throw new RuleViolation(`${label}: at most ${max} characters (this has ${t.length}).`, field, 422);
	return t;
}

/** The bid and, for a line, the item a request or an exclusion names, checked against the opened bids. */
function bidTarget(tab: Tabulated, input: { supplier?: unknown; item?: unknown }) {
	const supplierId = text(input.supplier);
	const column = tab.suppliers.findIndex((s) => s.id === supplierId && !s.withdrawn);
	if (column < 0) throw new RuleViolation('Supplier: choose a supplier whose bid is open.', 'supplier', 422);
	const item = text(input.item) || null;
	if (item !== null) {
		const row = tab.items.findIndex((i) => i.ref === item);
		if (row < 0) throw new RuleViolation(`Line: there is no item “${item}” in this event.`, 'item', 422);
		if (Number.isNaN(tab.prices[row * tab.suppliers.length + column]!))
			throw new RuleViolation(
				`Line: ${tab.suppliers[column]!.name} did not price item ${item}.`,
				'item',
				422
			);
	}
	return { supplierId, supplier: tab.suppliers[column]!.name, item };
}

async function changeable(user: SessionUser, eventId: string) {
	if (user.role !== 'buyer')
		throw new RuleViolation('Only buyers record explanations and exclusions.', undefined, 403);
	const found = await openedTabulation(user, eventId);
	if (['awarded', 'cancelled'].includes(found.event.state))
		throw new RuleViolation(`The event is ${found.event.state}: its bids are final.`, undefined, 409);
	return found;
}

const whatOf = (item: string | null) => (item === null ? 'the whole bid' : `line ${item}`);

/** Records and mails a request to explain a line or a whole bid. */
export async function askExplanation(
	user: SessionUser,
	eventId: string,
	input: { supplier?: unknown; item?: unknown; question?: unknown },
	context: Pick<RequestContext, 'origin'>
): Promise<{ mailed: number }> {
	const { tab } = await changeable(user, eventId);
	const target = bidTarget(tab, input);
	const question = longText(
		input.question,
		'question',
		'Question',
		QUESTION_MAX,
		'write what the supplier should explain (for example how the price covers labour, materials and the delivery terms).'
	);
	return db().transaction(async (trx) => {
		const event = (await lockEvent(trx, eventId)) as EventRow;
		const inquiry = await low.insertInquiry(trx, {
			event_id: eventId,
			supplier_organisation_id: target.supplierId,
			item_ref: target.item,
			question,
			asked_by: user.id,
			asked_at: now()
		});
		await appendTrail(trx, {
			eventId,
			actor: user,
			action: 'price explanation requested',
			detail: { inquiry: inquiry.id, supplier: target.supplier, item: target.item, question }
		});
		const mail = await eventMail(trx, event, context.origin, await buyerName(trx, event));
		const users = (await invitedSupplierUsers(trx, eventId)).filter(
			(u) => u.organisation_id === target.supplierId
		);
		await enqueueMail(
			trx,
			users.map((u) =>
				notice(
					u.email,
					`Please explain your price: ${mail.reference} ${mail.title}`,
					[
						`${mail.buyerName} asks your organisation to explain the price of ${whatOf(target.item)} of your bid in the sourcing event ${mail.reference} “${mail.title}”.`,
						`The question: ${question}`,
						'Please answer in writing on the event’s page. Buyers ask this before deciding on a price that looks abnormally low; your answer is recorded in the event’s decision trail.'
					],
					{ label: 'Answer the request', url: `${mail.url}/explanations` },
					mail
				)
			)
		);
		return { mailed: users.length };
	});
}

/** Records the supplier's answer to a request, as the buyer received it. */
export async function recordExplanation(
	user: SessionUser,
	eventId: string,
	input: { inquiry?: unknown; answer?: unknown }
): Promise<void> {
	const { tab } = await changeable(user, eventId);
	const id = text(input.inquiry);
	const answer = longText(
		input.answer,
		'answer',
		'Answer',
		ANSWER_MAX,
		'write the supplier’s answer as received.'
	);
	await db().transaction(async (trx) => {
		const inquiry = /^[0-9a-f-]{36}$/i.test(id) ? await low.findInquiry(trx, eventId, id) : undefined;
		if (!inquiry) throw new RuleViolation('Request: there is no such explanation request.', 'inquiry', 404);
		if (inquiry.answer !== null)
			throw new RuleViolation('Request: its answer is recorded already.', 'inquiry', 409);
		await low.recordAnswer(trx, inquiry.id, { answer, answer_recorded_by: user.id, answered_at: now() });
		await appendTrail(trx, {
			eventId,
			actor: user,
			action: 'price explanation recorded',
			detail: {
				inquiry: inquiry.id,
				supplier: tab.suppliers.find((s) => s.id === inquiry.supplier_organisation_id)?.name ?? null,
				item: inquiry.item_ref,
				answer
			}
		});
	});
}

/**
 * Excludes a line or a whole bid with a reason. Art. 69 asks for an explanation first: without an answered
 * request about that line or bid, the exclusion is refused unless the buyer confirms it anyway.
 */
export async function excludeBid(
	user: SessionUser,
	eventId: string,
	input: { supplier?: unknown; item?: unknown; reason?: unknown; withoutAnswer?: unknown }
): Promise<void> {
	const { tab } = await changeable(user, eventId);
	const target = bidTarget(tab, input);
	const reason = longText(
		input.reason,
		'reason',
		'Reason',
		REASON_MAX,
		'give the reason for the exclusion (why the explanation does not account for the low price).'
	);
	const confirmed =
		input.withoutAnswer === true || input.withoutAnswer === 'on' || input.withoutAnswer === 'true';
	await db().transaction(async (trx) => {
		await lockEvent(trx, eventId);
		const asked = (await low.listInquiries(trx, eventId)).filter(
			(q) =>
				q.supplier_organisation_id === target.supplierId &&
				(q.item_ref === null || q.item_ref === target.item)
		);
		const answered = asked.some((q) => q.answer !== null);
		if (!answered && !confirmed)
			throw new RuleViolation(
				`Without answer: ${target.supplier} has ${asked.length ? 'not yet answered' : 'not been asked'} to explain ${whatOf(target.item)}. The law asks the buyer to request an explanation before rejecting an abnormally low bid (EU Directive 2014/24/EU Art. 69). Tick "exclude without an answer" to go ahead anyway.`,
				'withoutAnswer',
				409
			);
		const standing = (await low.standingExclusions(trx, eventId)).find(
			(x) => x.supplier_organisation_id === target.supplierId && x.item_ref === target.item
		);
		if (standing)
			throw new RuleViolation(
				`Line: ${whatOf(target.item)} of ${target.supplier} is excluded already.`,
				'item',
				409
			);
		const exclusion = await low.insertExclusion(trx, {
			event_id: eventId,
			supplier_organisation_id: target.supplierId,
			item_ref: target.item,
			reason,
			excluded_by: user.id,
			excluded_at: now()
		});
		await appendTrail(trx, {
			eventId,
			actor: user,
			action: target.item === null ? 'bid excluded' : 'bid line excluded',
			detail: {
				exclusion: exclusion.id,
				supplier: target.supplier,
				item: target.item,
				reason,
				explanation: answered ? 'answered' : asked.length ? 'asked, not answered' : 'not asked'
			}
		});
	});
}

/** Undoes a standing exclusion, with the reason. */
export async function undoExclusion(
	user: SessionUser,
	eventId: string,
	input: { exclusion?: unknown; reason?: unknown }
): Promise<void> {
	const { tab } = await changeable(user, eventId);
	const id = text(input.exclusion);
	const reason = longText(
		input.reason,
		'reason',
		'Reason',
		REASON_MAX,
		'give the reason for taking the line or bid back.'
	);
	await db().transaction(async (trx) => {
		const exclusion = /^[0-9a-f-]{36}$/i.test(id) ? await low.findExclusion(trx, eventId, id) : undefined;
		if (!exclusion || exclusion.undone_at !== null)
			throw new RuleViolation('Exclusion: there is no standing exclusion of that kind.', 'exclusion', 404);
		await low.undoExclusion(trx, exclusion.id, { undo_reason: reason, undone_by: user.id, undone_at: now() });
		await appendTrail(trx, {
			eventId,
			actor: user,
			action: 'exclusion undone',
			detail: {
				exclusion: exclusion.id,
				supplier: tab.suppliers.find((s) => s.id === exclusion.supplier_organisation_id)?.name ?? null,
				item: exclusion.item_ref,
				reason
			}
		});
	});
}

/** The standing exclusions, as a run records them (suppliers by name, as the problem names them). */
export async function exclusionsForRun(
	eventId: string,
	names: ReadonlyMap<string, string>
): Promise<{ standing: BidExclusionRow[]; recorded: RunExclusion[] }> {
	const standing = await low.standingExclusions(db(), eventId);
	return {
		standing,
		recorded: standing.map((x) => ({
			supplier: names.get(x.supplier_organisation_id) ?? x.supplier_organisation_id,
			item: x.item_ref,
			reason: x.reason,
			excludedAt: x.excluded_at.toISOString()
		}))
	};
}

/** Leaves excluded lines and whole bids out of the bids a run is built from. */
export function withoutExcluded<B extends { supplierOrganisationId: string; lines: { item: string }[] }>(
	bids: B[],
	standing: Pick<BidExclusionRow, 'supplier_organisation_id' | 'item_ref'>[]
): B[] {
	if (!standing.length) return bids;
	const whole = new Set(standing.filter((x) => x.item_ref === null).map((x) => x.supplier_organisation_id));
	const lines = new Set(
		standing.filter((x) => x.item_ref !== null).map((x) => `${x.supplier_organisation_id}|${x.item_ref}`)
	);
	return bids
		.filter((b) => !whole.has(b.supplierOrganisationId))
		.map((b) => ({
			...b,
			lines: b.lines.filter((l) => !lines.has(`${b.supplierOrganisationId}|${l.item}`))
		}));
}

/**
 * For a run's page: the flags on lines the run awards (and on the totals of suppliers it awards), and the
 * exclusions the run was built without.
 */
export async function runLowPrices(
	user: SessionUser,
	eventId: string,
	run: { id: string; round?: number; result: { awards: { supplier: string; item: string }[] } | null }
) {
	// The screen of the bids the run was built on: its round's, not a later round's.
	const [found, excluded] = await Promise.all([
		staffTabulation(user, eventId, { round: run.round }),
		low.runExclusions(db(), run.id)
	]);
	if (found.sealed) return { flags: [], excluded: excluded ?? [] };
	const awarded = new Set((run.result?.awards ?? []).map((a) => `${a.supplier}|${a.item}`));
	const winners = new Set((run.result?.awards ?? []).map((a) => a.supplier));
	const flags = lowPriceFlags(found.tab)
		.filter((f) => (f.item === null ? winners.has(f.supplier) : awarded.has(`${f.supplier}|${f.item}`)))
		.map((f) => ({ supplier: f.supplier, item: f.item, text: describeFlag(f, found.event.currency) }));
	return { flags, excluded: excluded ?? [] };
}

/** The requests addressed to the supplier's own organisation in an event (never another supplier's). */
export async function supplierInquiries(user: SessionUser, eventId: string) {
	const access = await eventFor(user, eventId);
	if (access.view !== 'supplier')
		throw new RuleViolation('This page is for the invited suppliers.', undefined, 403);
	const own = (await low.listInquiries(db(), eventId)).filter(
		(q) => q.supplier_organisation_id === user.organisationId
	);
	return { event: access.event, inquiries: own };
}

/** The supplier answers a request addressed to its organisation, once. */
export async function answerAsSupplier(
	user: SessionUser,
	eventId: string,
	input: { inquiry?: unknown; answer?: unknown }
): Promise<void> {
	const { event } = await supplierInquiries(user, eventId);
	if (['awarded', 'cancelled'].includes(event.state))
		throw new RuleViolation(`The event is ${event.state}: answers are closed.`, undefined, 409);
	const id = text(input.inquiry);
	const answer = longText(
		input.answer,
		'answer',
		'Answer',
		ANSWER_MAX,
		'write your explanation of the price.'
	);
	await db().transaction(async (trx) => {
		const inquiry = /^[0-9a-f-]{36}$/i.test(id) ? await low.findInquiry(trx, eventId, id) : undefined;
		// Another supplier's request is as absent as one that does not exist.
		if (!inquiry || inquiry.supplier_organisation_id !== user.organisationId)
			throw new RuleViolation('Request: there is no such explanation request.', 'inquiry', 404);
		if (inquiry.answer !== null)
			throw new RuleViolation('Request: its answer is recorded already.', 'inquiry', 409);
		await low.recordAnswer(trx, inquiry.id, { answer, answer_recorded_by: user.id, answered_at: now() });
		await appendTrail(trx, {
			eventId,
			actor: user,
			action: 'price explanation answered by the supplier',
			detail: { inquiry: inquiry.id, item: inquiry.item_ref, answer }
		});
	});
}
