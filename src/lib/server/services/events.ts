// Sourcing events from draft to opening: who may see and change what, publication, amendments,
// invitations, clarifications and the closing at the deadline. Every deadline decision reads clock.now().
import { AsyncLocalStorage } from 'node:async_hooks';
import { isStaff } from '$lib/roles';
import type { ItemFields } from '../db/events';
import type { SessionUser } from '../auth/session-user';
import { now } from '../clock';
import {
	answerQuestion,
	bidCounts,
	deleteInvitation,
	findEvent,
	insertAmendment,
	insertEvent,
	insertInvitation,
	insertQuestion,
	invitedSupplierUsers,
	isInvited,
	listInvitations,
	listItems,
	lockEvent,
	lockQuestion,
	findEventByReference,
	replaceItems,
	setInvitationTags,
	setEventState,
	updateAmendedFields,
	updateEventFields,
	type EventFields,
	type EventRow,
	type EventState,
	type ItemRow
} from '../db/events';
import { ensureLowestCostPlan } from '../db/awards';
import { listUploadCommitments } from '../db/bids';
import { db, type Db } from '../db/knex';
import { findOrganisation } from '../db/organisations';
import { findUserByEmail } from '../db/users';
import { listRates, replaceRates } from '../db/currencies';
import { allowedCurrencies, parseRateTable, rateChanges, type EventRate } from '$lib/currencies';
import { enqueueMail, scheduleEventClose } from '../jobs/queue';
import {
	amendmentMail,
	clarificationMail,
	eventInvitationMail,
	type EventMailContext
} from '../mail/templates';
import type { SheetEvent, SheetProblem } from '../sheets/bid-sheet';
import type { Criterion } from '$lib/evaluation/criteria';
import { readItemFile } from '../sheets/read-bid-file';
import { COMMITMENT_SCHEME } from '../storage/sealed-files';
import { appendTrail, canonicalJson, sha256, trailHead } from '../trail';
import { RuleViolation } from './errors';
import { inviteUser, type RequestContext } from './users';
import { openDueRounds } from './round-opening';
import { hasDueRound } from '../db/rounds';
import { formatInZone } from '$lib/time';

export type EventAccess = { event: EventRow; view: 'staff' | 'supplier'; canEdit: boolean };

/** The state as the rules see it: an open event past its deadline is closed, even before the job runs. */
export function effectiveState(event: Pick<EventRow, 'state' | 'deadline'>, at = now()): EventState {
	return event.state === 'open' && event.deadline.getTime() <= at.getTime() ? 'closed' : event.state;
}

export const isPastDeadline = (event: Pick<EventRow, 'deadline'>, at = now()) =>
	event.deadline.getTime() <= at.getTime();

const notFound = () => new RuleViolation('There is no such event, or it is not open to you.', undefined, 404);

/**
 * The event if the user may see it: staff of the buying organisation that owns it (buyers change it,
 * approvers and auditors read), or a supplier organisation invited to it once it is published. Anyone
 * else gets the same 404 as for an event that does not exist, so not even its existence leaks.
 */
export async function eventFor(user: SessionUser, id: string): Promise<EventAccess> {
	const scope = readScope.getStore();
	let current = scope?.get(id);
	if (!current) {
		current = currentEvent(id);
		scope?.set(id, current);
	}
	const event = await current;
	if (!event) throw notFound();
	return accessTo(db(), user, event);
}

async function currentEvent(id: string): Promise<EventRow | undefined> {
	const event = await findEvent(db(), id);
	if (event?.state === 'open' && isPastDeadline(event))
		return (await closeIfDue(event.id, 'first read after the deadline')) ?? event;
	// A later round past its deadline: its opening is recorded by the first read too.
	if (event && event.opened_at && (await hasDueRound(db(), event.id, now())))
		await closeIfDue(event.id, 'first read after the deadline');
	return event;
}

/** The events read so far in the current read request, by id (see inReadScope). */
const readScope = new AsyncLocalStorage<Map<string, Promise<EventRow | undefined>>>();

/**
 * Runs `answer` (a GET or HEAD request: nothing in it changes an event) with each event read at most
 * once: an event tab's layout and its page both ask for the event, and the access check is made on the
 * same row. Never around a form action, which may change the event before its page is loaded again.
 */
export const inReadScope = <T>(answer: () => T): T => readScope.run(new Map(), answer);

/** Who may see an event, read through `from` (a transaction that holds the event, or the pool). */
async function accessTo(from: Db, user: SessionUser, event: EventRow): Promise<EventAccess> {
	if (isStaff(user.role)) {
		if (event.organisation_id !== user.organisationId) throw notFound();
		return { event, view: 'staff', canEdit: user.role === 'buyer' };
	}
	if (event.state === 'draft' || !(await isInvited(from, event.id, user.organisationId))) throw notFound();
	return { event, view: 'supplier', canEdit: false };
}

/**
 * The event, for those who evaluate its bids: its buyers, approvers and auditors. Its administrators
 * manage users and never read prices, runs or reports (403, as suppliers get with `supplierMessage`).
 */
export async function evaluationEvent(
	user: SessionUser,
	id: string,
	supplierMessage = 'Suppliers do not see other bids.'
): Promise<EventRow> {
	const access = await eventFor(user, id);
	if (access.view !== 'staff') throw new RuleViolation(supplierMessage, undefined, 403);
	if (user.role === 'admin')
		throw new RuleViolation(
			'Administrators manage users; bids, award plans and runs are for buyers, approvers and auditors.',
			undefined,
			403
		);
	return access.event;
}

const onlyBuyers = () => new RuleViolation('Only buyers change events.', undefined, 403);

export async function buyerEvent(user: SessionUser, id: string): Promise<EventRow> {
	const access = await eventFor(user, id);
	if (!access.canEdit) throw onlyBuyers();
	return access.event;
}

/** The event locked in `trx` for a change by one of its buyers: the access check reads through `trx` too. */
async function lockedForBuyer(trx: Db, user: SessionUser, id: string): Promise<EventRow> {
	const event = await lockEvent(trx, id);
	if (!event) throw notFound();
	if (!(await accessTo(trx, user, event)).canEdit) throw onlyBuyers();
	return event;
}

/**
 * Closes an open event whose deadline has passed and records the opening: called by the deadline job
 * and by the first read after the deadline, whichever comes first. Idempotent. The deadline read under
 * the lock is the latest announced one (it only moves later, by trigger), so a job scheduled for an
 * earlier deadline that was since extended opens nothing. The salts of the uploads' commitments are
 * revealed right after the opening, so anyone holding a file can check it against the trail.
 */
export async function closeIfDue(eventId: string, by: string): Promise<EventRow | undefined> {
	return db().transaction(async (trx) => {
		const event = await lockEvent(trx, eventId);
		// The same job and first read record the opening of a later round (services/round-opening.ts).
		if (event && event.opened_at) await openDueRounds(trx, eventId, by);
		if (!event || event.state !== 'open' || !isPastDeadline(event)) return event;
		const { suppliers, revisions } = await bidCounts(trx, eventId);
		const at = now();
		const record = { at: at.toISOString(), by, suppliers, revisions };
		await setEventState(trx, eventId, 'closed', { opened_at: at, opening_record: record });
		await appendTrail(trx, {
			eventId,
			actor: 'system',
			action: 'bids opened',
			detail: { ...record, state: { from: 'open', to: 'closed' } },
			at
		});
		await appendTrail(trx, {
			eventId,
			actor: 'system',
			action: 'commitments revealed',
			detail: {
				scheme: COMMITMENT_SCHEME,
				uploads: (await listUploadCommitments(trx, eventId)).map((u) => ({
					upload: u.id,
					commitment: u.commitment,
					salt: u.commitment_salt
				}))
			},
			at
		});
		// Runs start after the opening: from here on the event has its lowest-cost plan (no rules).
		await ensureLowestCostPlan(trx, eventId);
		return { ...event, state: 'closed', opened_at: at, opening_record: record };
	});
}

async function referenceFree(trx: Db, organisationId: string, reference: string, except?: string) {
	const clash = await findEventByReference(trx, organisationId, reference);
	if (clash && clash.id !== except)
		throw new RuleViolation(`Another event already has the reference ${reference}.`, 'reference', 409);
}

export async function createEvent(actor: SessionUser, fields: EventFields): Promise<EventRow> {
	return db().transaction(async (trx) => {
		await referenceFree(trx, actor.organisationId, fields.reference);
		const event = await insertEvent(trx, actor.organisationId, actor.id, fields);
		await appendTrail(trx, {
			eventId: event.id,
			actor,
			action: 'event created',
			detail: trailFields(fields)
		});
		return event;
	});
}

export async function updateDraft(actor: SessionUser, id: string, fields: EventFields): Promise<void> {
	await db().transaction(async (trx) => {
		const event = await lockedDraft(trx, actor, id);
		await referenceFree(trx, event.organisation_id, fields.reference, event.id);
		// Each rate is in units of the event currency: under another one, the same numbers would mean
		// something else, and nothing would say so.
		const rates = fields.currency !== event.currency ? await listRates(trx, id) : [];
		if (rates.length)
			throw new RuleViolation(
				`The rate table gives ${rates.map((r) => r.currency).join(', ')} in ${event.currency}. Clear it (Other bid currencies) before changing the event currency, then set the rates in ${fields.currency}.`,
				'currency',
				422
			);
		await updateEventFields(trx, id, fields);
		await appendTrail(trx, { eventId: id, actor, action: 'draft changed', detail: trailFields(fields) });
	});
}

export async function lockedDraft(trx: Db, actor: SessionUser, id: string): Promise<EventRow> {
	const event = await lockedForBuyer(trx, actor, id);
	if (event.state !== 'draft') {
		throw new RuleViolation(
			'The event is published: its items and terms are locked. Change it by an amendment.',
			undefined,
			409
		);
	}
	return event;
}

/**
 * A buyer's item list file (.xlsx or .csv) for a draft event: read on a worker thread (sheets/
 * read-bid-file.ts), as bid files are, so a large or hostile file never holds up the web server; saved
 * only when every row is good, else every problem by sheet, row and column.
 */
export async function importItems(
	actor: SessionUser,
	id: string,
	file: { name: string; bytes: Buffer }
): Promise<{ ok: true; saved: number } | { ok: false; problems: SheetProblem[] }> {
	// Who may change the event is checked before the file is read, and again when the items are saved.
	await buyerEvent(actor, id);
	const outcome = await readItemFile(file);
	if (!outcome.ok) return outcome;
	await saveItems(actor, id, outcome.items);
	return { ok: true, saved: outcome.items.length };
}

export async function saveItems(actor: SessionUser, id: string, items: ItemFields[]): Promise<void> {
	await db().transaction(async (trx) => {
		await lockedDraft(trx, actor, id);
		await replaceItems(trx, id, items);
		await appendTrail(trx, {
			eventId: id,
			actor,
			action: 'items saved',
			detail: {
				items: items.length,
				lots: new Set(items.map((i) => i.lot)).size,
				sha256: sha256(canonicalJson(items))
			}
		});
	});
}

export function mailContext(event: EventRow, origin: string, buyerName: string): EventMailContext {
	return {
		reference: event.reference,
		title: event.title,
		buyerName,
		deadline: `${formatInZone(event.deadline, event.time_zone)} (${event.time_zone})`,
		url: `${origin}/supplier/events/${event.id}`
	};
}

/**
 * The mail context with the trail's head at this moment, read through `from` (the transaction that
 * queues the mail): every mail then anchors the chain outside the database.
 */
export async function eventMail(
	from: Db,
	event: EventRow,
	origin: string,
	buyerName: string
): Promise<EventMailContext> {
	const head = await trailHead(from, event.id);
	return { ...mailContext(event, origin, buyerName), trailHead: head && { hash: head.hash } };
}

/** The buying organisation's name, as event mail gives it. */
export async function buyerName(from: Db, event: EventRow): Promise<string> {
	return (await findOrganisation(from, event.organisation_id))?.name ?? 'The buyer';
}

export async function publish(
	actor: SessionUser,
	id: string,
	context: RequestContext
): Promise<{ invited: number; mailed: number }> {
	return db().transaction(async (trx) => {
		const event = await lockedDraft(trx, actor, id);
		const [items, invitations] = await Promise.all([listItems(trx, id), listInvitations(trx, id)]);
		const missing = [
			items.length ? null : 'at least one line item',
			invitations.length ? null : 'at least one invited supplier',
			isPastDeadline(event) ? 'a bid deadline in the future' : null
		].filter(Boolean);
		if (missing.length)
			throw new RuleViolation(`Before publishing, the event needs ${missing.join(', ')}.`, undefined, 409);
		const at = now();
		await setEventState(trx, id, 'open', { published_at: at });
		await appendTrail(trx, {
			eventId: id,
			actor,
			action: 'event published',
			detail: {
				state: { from: 'draft', to: 'open' },
				deadline: event.deadline.toISOString(),
				timeZone: event.time_zone,
				items: items.length,
				invited: invitations.map((i) => i.supplier_name)
			},
			at
		});
		// The closing job and the invitations are queued with the publication, or not at all.
		await scheduleEventClose(trx, id, event.deadline);
		const recipients = await invitedSupplierUsers(trx, id);
		const published = { ...event, state: 'open' as const };
		const mail = await eventMail(trx, published, context.origin, await buyerName(trx, published));
		await enqueueMail(
			trx,
			recipients.map((r) => eventInvitationMail(r.email, mail))
		);
		return { invited: invitations.length, mailed: recipients.length };
	});
}

export interface InviteRequest {
	supplierOrganisationId: string;
	email: string;
	name: string;
	newSupplierName: string;
}

/** Invites an existing supplier organisation, or a new one by e-mail (its account invitation goes out too). */
export async function inviteSupplier(
	actor: SessionUser,
	id: string,
	request: InviteRequest,
	context: RequestContext
): Promise<{ organisationName: string; added: boolean }> {
	const event = await buyerEvent(actor, id);
	if (!['draft', 'open'].includes(effectiveState(event)))
		throw new RuleViolation('Suppliers can be invited only before the bid deadline.', undefined, 409);
	let organisationId = request.supplierOrganisationId;
	if (!organisationId) {
		const existing = await findUserByEmail(db(), request.email.trim().toLowerCase());
		if (existing) {
			if (existing.role !== 'supplier')
				throw new RuleViolation(`${request.email} belongs to a staff account, not a supplier.`, 'email', 409);
			organisationId = existing.organisation_id;
		} else {
			const { user } = await inviteUser(
				actor,
				{
					email: request.email,
					name: request.name || request.email,
					role: 'supplier',
					supplierOrganisationId: '',
					newSupplierName: request.newSupplierName
				},
				context
			);
			organisationId = user.organisation_id;
		}
	}
	const organisation = await findOrganisation(db(), organisationId);
	if (!organisation || organisation.kind !== 'supplier')
		throw new RuleViolation('Choose a supplier organisation from the list.', 'supplierOrganisationId', 422);
	const added = await db().transaction(async (trx) => {
		const inserted = await insertInvitation(trx, id, organisationId, actor.id);
		if (!inserted) return false;
		await appendTrail(trx, {
			eventId: id,
			actor,
			action: 'supplier invited',
			detail: { supplier: organisation.name }
		});
		if (event.state === 'open') {
			const mail = await eventMail(trx, event, context.origin, await buyerName(trx, event));
			const users = (await invitedSupplierUsers(trx, id)).filter((u) => u.organisation_id === organisationId);
			await enqueueMail(
				trx,
				users.map((u) => eventInvitationMail(u.email, mail))
			);
		}
		return true;
	});
	return { organisationName: organisation.name, added };
}

export async function removeInvitation(
	actor: SessionUser,
	id: string,
	organisationId: string
): Promise<void> {
	await db().transaction(async (trx) => {
		await lockedDraft(trx, actor, id);
		await deleteInvitation(trx, id, organisationId);
		const organisation = await findOrganisation(trx, organisationId);
		await appendTrail(trx, {
			eventId: id,
			actor,
			action: 'invitation withdrawn',
			detail: { supplier: organisation?.name ?? organisationId }
		});
	});
}

export const TAG = /^[a-z][a-z0-9_]{0,39}$/;

/** The buyer's tags for an invited supplier in this event; used by award rules on groups of suppliers. */
export async function tagSupplier(
	actor: SessionUser,
	id: string,
	organisationId: string,
	tags: string[]
): Promise<string[]> {
	const event = await buyerEvent(actor, id);
	if (['awarded', 'cancelled'].includes(event.state))
		throw new RuleViolation('The event is awarded: its tags are final.', undefined, 409);
	const clean = [...new Set(tags.map((t) => t.trim().toLowerCase()).filter(Boolean))];
	const bad = clean.find((t) => !TAG.test(t));
	if (bad)
		throw new RuleViolation(
			`“${bad}” is not a tag: lower-case letters, digits and _ only, such as small_business.`,
			'tags',
			422
		);
	await db().transaction(async (trx) => {
		if (!(await setInvitationTags(trx, id, organisationId, clean)))
			throw new RuleViolation('That supplier is not invited to this event.', undefined, 404);
		const organisation = await findOrganisation(trx, organisationId);
		await appendTrail(trx, {
			eventId: id,
			actor,
			action: 'supplier tagged',
			detail: { supplier: organisation?.name, tags: clean }
		});
	});
	return clean;
}

export interface AmendmentRequest {
	summary: string;
	description: string;
	deliveryPlace: string;
	deadline: Date;
	/** The new exchange-rate table (parseRateTable's lines); absent: unchanged. */
	rates?: string;
}

/** Why a published deadline cannot be brought forward; shown to the buyer who tries. */
export function deadlineOnlyLater(current: Date, timeZone: string): string {
	return (
		`The bid deadline can only be extended, never brought forward: bids stay sealed until the latest ` +
		`announced deadline, ${formatInZone(current, timeZone)} (${timeZone}), and suppliers plan their bids ` +
		`on it. Choose a later time, or keep this one. National rules on time limits and their extension apply.`
	);
}

/**
 * A change after publishing: recorded with what changed, shown to suppliers and mailed to every invited
 * one. The deadline can only be extended (the seal: opening happens at the latest announced deadline).
 */
export async function amend(
	actor: SessionUser,
	id: string,
	request: AmendmentRequest,
	context: RequestContext
): Promise<{ number: number; mailed: number }> {
	// The access check (which may close an event past its deadline) runs before the transaction opens.
	await buyerEvent(actor, id);
	return db().transaction(async (trx) => {
		const event = (await lockEvent(trx, id))!;
		if (effectiveState(event) !== 'open')
			throw new RuleViolation('Only an open event before its deadline can be amended.', undefined, 409);
		if (request.deadline.getTime() < event.deadline.getTime())
			throw new RuleViolation(deadlineOnlyLater(event.deadline, event.time_zone), 'deadlineLocal', 422);
		const detail: Record<string, { before: unknown; after: unknown }> = {};
		const changes: string[] = [];
		if (request.description !== event.description) {
			detail.description = { before: event.description, after: request.description };
			changes.push(`Description: ${request.description || '(none)'}`);
		}
		if (request.deliveryPlace !== event.delivery_place) {
			detail.deliveryPlace = { before: event.delivery_place, after: request.deliveryPlace };
			changes.push(`Delivery place: ${event.incoterm} ${request.deliveryPlace}`);
		}
		if (request.deadline.getTime() !== event.deadline.getTime()) {
			detail.deadline = { before: event.deadline.toISOString(), after: request.deadline.toISOString() };
			changes.push(
				`Bid deadline extended: ${formatInZone(request.deadline, event.time_zone)} (${event.time_zone}), was ${formatInZone(event.deadline, event.time_zone)}`
			);
		}
		const rates = request.rates === undefined ? undefined : await amendedRates(trx, event, request.rates);
		if (rates) {
			detail.rates = { before: rates.before, after: rates.after };
			changes.push(...rates.lines);
		}
		if (!changes.length) throw new RuleViolation('Nothing would change.', 'summary', 422);
		await updateAmendedFields(trx, id, request);
		const amendment = await insertAmendment(trx, id, request.summary, detail, actor.id);
		// After the amendment's row: the database lets a published event's rates change only beside one.
		if (rates) await replaceRates(trx, id, rates.after);
		await appendTrail(trx, {
			eventId: id,
			actor,
			action: `amendment ${amendment.number}`,
			detail: { summary: request.summary, changes: detail }
		});
		const amended = { ...event, deadline: request.deadline };
		await scheduleEventClose(trx, id, amended.deadline);
		const recipients = await invitedSupplierUsers(trx, id);
		const mail = await eventMail(trx, amended, context.origin, await buyerName(trx, amended));
		await enqueueMail(
			trx,
			recipients.map((r) =>
				amendmentMail(r.email, mail, { number: amendment.number, summary: amendment.summary, changes })
			)
		);
		return { number: amendment.number, mailed: recipients.length };
	});
}

export async function askQuestion(actor: SessionUser, id: string, text: string): Promise<void> {
	const { event, view } = await eventFor(actor, id);
	if (view !== 'supplier') throw new RuleViolation('Only invited suppliers ask questions.', undefined, 403);
	if (effectiveState(event) !== 'open')
		throw new RuleViolation('Questions can be asked only while the event is open for bids.', 'text', 409);
	await db().transaction(async (trx) => {
		const question = await insertQuestion(trx, id, actor.organisationId, actor.id, text);
		await appendTrail(trx, {
			eventId: id,
			actor,
			action: 'question asked',
			detail: { question: question.id, supplier: actor.organisationName, text }
		});
	});
}

export async function answer(
	actor: SessionUser,
	id: string,
	request: { questionId: string; publishedQuestion: string; answer: string },
	context: RequestContext
): Promise<{ mailed: number }> {
	const event = await buyerEvent(actor, id);
	if (!/^[0-9a-f-]{36}$/i.test(request.questionId))
		throw new RuleViolation('There is no such question in this event.', undefined, 404);
	return db().transaction(async (trx) => {
		// Checked under the question's lock: of two answers at once, the second finds the first.
		const question = await lockQuestion(trx, id, request.questionId);
		if (!question) throw new RuleViolation('There is no such question in this event.', undefined, 404);
		if (question.answer) throw new RuleViolation('This question has been answered already.', undefined, 409);
		await answerQuestion(trx, question.id, request.publishedQuestion, request.answer, actor.id, now());
		await appendTrail(trx, {
			eventId: id,
			actor,
			action: 'answer published',
			detail: { question: question.id, publishedQuestion: request.publishedQuestion, answer: request.answer }
		});
		const recipients = await invitedSupplierUsers(trx, id);
		const mail = await eventMail(trx, event, context.origin, await buyerName(trx, event));
		await enqueueMail(
			trx,
			recipients.map((r) =>
				clarificationMail(r.email, mail, { question: request.publishedQuestion, answer: request.answer })
			)
		);
		return { mailed: recipients.length };
	});
}

/** The rate table an amendment would set, with its lines for the mail; undefined when it changes nothing. */
async function amendedRates(trx: Db, event: EventRow, text: string) {
	const parsed = parseRateTable(text, event.currency);
	if (!parsed.ok) throw new RuleViolation(parsed.problems.join(' '), 'rates', 422);
	const before = await listRates(trx, event.id);
	const diff = rateChanges(before, parsed.rates, event.currency);
	if (diff.removed.length)
		throw new RuleViolation(
			`${diff.removed.join(', ')} cannot be withdrawn after publication: bids may already be in it. Change its rate instead.`,
			'rates',
			422
		);
	return diff.changed ? { before, after: parsed.rates, lines: diff.lines } : undefined;
}

function trailFields(fields: EventFields) {
	return { ...fields, deadline: fields.deadline.toISOString() };
}

export function sheetEvent(
	event: EventRow,
	items: ItemRow[],
	rates: EventRate[] = [],
	criteria: Criterion[] = []
): SheetEvent {
	const answered = criteria.filter((c) => c.answeredBy === 'supplier');
	return {
		bidCurrencies: allowedCurrencies(event.currency, rates).slice(1),
		...(answered.length ? { criteria: answered.map(({ ref, name, unit }) => ({ ref, name, unit })) } : {}),
		reference: event.reference,
		title: event.title,
		currency: event.currency,
		bidValidityDays: event.bid_validity_days,
		deadline: event.deadline,
		timeZone: event.time_zone,
		allowPriceBreaks: event.allow_price_breaks,
		allowCapacity: event.allow_capacity,
		allowBundles: event.allow_bundles,
		allowPackSizes: event.allow_pack_sizes,
		items: items.map((i) => ({
			ref: i.ref,
			description: i.description,
			lot: i.lot_ref,
			unit: i.unit,
			quantity: Number(i.quantity),
			orderMultiple: i.order_multiple === null ? null : Number(i.order_multiple)
		}))
	};
}
