// A supplier's bid: the sheet to fill, uploads (encrypted in S3 under a generated key, with their SHA-256
// for the supplier and a salted commitment for the trail; checked by content, parsed with every problem
// reported), on-screen entry, withdrawal and history; and what the buying organisation may see: who
// submitted when, and prices only after the deadline.
import { listRates } from '../db/currencies';
import { createHash, randomUUID } from 'node:crypto';
import type { SessionUser } from '../auth/session-user';
import { now } from '../clock';
import {
	finishUpload,
	insertRevision,
	insertUpload,
	lockSupplierBid,
	listOwnRevisions,
	listSubmissions,
	listUploads,
	MAX_PROBLEMS_KEPT,
	visibleBids,
	type RevisionRow,
	type Submission,
	type UploadRow,
	type VisibleBid
} from '../db/bids';
import { listCriteria } from '../db/criteria';
import { holdEvent, listItems, type EventRow } from '../db/events';
import { db, type Db } from '../db/knex';
import { enqueueMail } from '../jobs/queue';
import { bidReceiptMail, withdrawalMail } from '../mail/templates';
import { buildBidCsv, buildBidSheet, parseScreenPrices, type SheetProblem } from '../sheets/bid-sheet';
import { readBidFile } from '../sheets/read-bid-file';
import { checkUploadQuota, countSupplierUpload, UploadLimitReached } from './upload-limits';
import { deleteObject } from '../storage';
import { commitToFile, putBidFile } from '../storage/sealed-files';
import { appendTrail } from '../trail';
import { RuleViolation } from './errors';
import { effectiveState, evaluationEvent, eventFor, eventMail, sheetEvent } from './events';
import { biddingRound } from './rounds';
import type { RequestContext } from './users';
import { formatInZone } from '$lib/time';

async function supplierEvent(actor: SessionUser, id: string): Promise<EventRow> {
	const access = await eventFor(actor, id);
	if (access.view !== 'supplier') throw new RuleViolation('Only invited suppliers bid.', undefined, 403);
	return access.event;
}

export async function bidSheet(
	actor: SessionUser,
	id: string,
	format: 'xlsx' | 'csv'
): Promise<{ body: Buffer; fileName: string; contentType: string }> {
	const event = await supplierEvent(actor, id);
	const sheet = sheetEvent(
		event,
		await listItems(db(), id),
		await listRates(db(), id),
		await listCriteria(db(), id)
	);
	const base = `bid-sheet-${event.reference.replace(/[^A-Za-z0-9._-]/g, '_')}`;
	return format === 'csv'
		? {
				body: Buffer.from(buildBidCsv(sheet), 'utf8'),
				fileName: `${base}.csv`,
				contentType: 'text/csv; charset=utf-8'
			}
		: {
				body: await buildBidSheet(sheet, actor.organisationName),
				fileName: `${base}.xlsx`,
				contentType: 'application/vnd.openxmlformats-officedocument.spreadsheetml.sheet'
			};
}

/**
 * Runs a limit check; an upload it refuses goes on the event's trail ("upload refused", with the supplier
 * and the reason) before the refusal is answered, so a supplier's "I tried before the deadline" can be
 * checked. The trail entry is its own transaction: the refused one rolled back.
 */
async function trailingLimits<T>(actor: SessionUser, eventId: string, check: () => Promise<T>): Promise<T> {
	try {
		return await check();
	} catch (error) {
		if (error instanceof UploadLimitReached && error.onTrail) {
			await appendTrail(null, {
				eventId,
				actor,
				action: 'upload refused',
				detail: { supplier: actor.organisationName, reason: error.reason }
			});
		}
		throw error;
	}
}

export type SubmitOutcome =
	| { ok: true; revision: RevisionRow; upload: UploadRow | null; sha256: string | null }
	| { ok: false; problems: SheetProblem[]; problemCount: number; upload: UploadRow | null };

/**
 * An uploaded bid sheet, as a small state machine whose every step is committed before the next, so no
 * file is ever stored under a key the database does not know and no answer contradicts what was kept:
 *
 * 1. receiving: the organisation's upload count is taken, then, in one transaction under the lock on the
 *    organisation's uploads to the event, the storage quota is checked and the row is written with its
 *    generated object key, SHA-256 and salted commitment (nothing is stored past the limits);
 * 2. the file is stored, sealed, under that key, while it is read on a worker thread (type, size,
 *    entries and sheet shape before any parsing, then every cell);
 * 3. rejected: the row gets its report (the first MAX_PROBLEMS_KEPT problems and their total) and the
 *    trail an entry; nothing else changes, and the file is kept with it;
 *    accepted: in one transaction holding the event's lock, with the deadline checked again by the
 *    server's clock, the row is marked, the bid becomes the next numbered revision, the trail gets its
 *    entry and the receipt is queued;
 *    refused: anything else (the deadline passed meanwhile, the store or the database failed): the row is
 *    marked refused and its object deleted before the error is answered.
 *
 * A request that dies between 1 and 3 leaves a "receiving" row: services/upload-sweep.ts refuses it after
 * a few minutes and deletes its object. Once step 3 commits, only the answer is built (nothing can fail).
 */
export async function submitUpload(
	actor: SessionUser,
	id: string,
	file: { name: string; bytes: Buffer },
	context: RequestContext
): Promise<SubmitOutcome> {
	const event = await supplierEvent(actor, id);
	// Until the event's deadline, or in a later round the supplier is invited to, until that round's.
	await biddingRound(db(), event, actor.organisationId);
	await trailingLimits(actor, event.id, () => countSupplierUpload(event.id, actor.organisationId));
	const sha256 = createHash('sha256').update(file.bytes).digest('hex');
	// Before the opening the buying side sees only this commitment: a plain hash lets prices be guessed.
	const { commitment, salt } = commitToFile(file.bytes);
	const key = `uploads/${event.id}/${actor.organisationId}/${randomUUID()}`;
	const receiving = await trailingLimits(actor, event.id, () =>
		db().transaction(async (trx) => {
			await lockSupplierBid(trx, event.id, actor.organisationId);
			await checkUploadQuota(trx, event.id, actor.organisationId, file.bytes.length);
			return insertUpload(trx, {
				event_id: event.id,
				supplier_organisation_id: actor.organisationId,
				uploaded_by: actor.id,
				storage_key: key,
				sha256,
				size_bytes: file.bytes.length,
				commitment,
				commitment_salt: salt,
				file_name: file.name.slice(0, 255) || 'upload',
				kind: null,
				status: 'receiving',
				report: [],
				problem_count: 0,
				received_at: now()
			});
		})
	);
	try {
		const [items, criteria] = await Promise.all([listItems(db(), id), listCriteria(db(), id)]);
		const [reading] = await Promise.all([
			readBidFile(sheetEvent(event, items, await listRates(db(), id), criteria), file),
			putBidFile(key, file.bytes)
		]);
		if (!reading.outcome.ok) {
			const problems = reading.outcome.problems;
			const upload = await db().transaction(async (trx) => {
				const stored = await finishUpload(trx, receiving.id, {
					status: 'rejected',
					kind: reading.kind,
					report: problems,
					problem_count: problems.length,
					received_at: now()
				});
				if (!stored) throw abandoned();
				await appendTrail(trx, {
					eventId: id,
					actor,
					action: 'upload rejected',
					detail: { supplier: actor.organisationName, upload: stored.id, commitment },
					at: stored.received_at
				});
				return stored;
			});
			return {
				ok: false,
				problems: problems.slice(0, MAX_PROBLEMS_KEPT),
				problemCount: problems.length,
				upload
			};
		}
		const bid = reading.outcome.bid;
		const { revision, upload } = await db().transaction(async (trx) => {
			const held = (await holdEvent(trx, id))!;
			const at = now();
			const round = await biddingRound(trx, held, actor.organisationId, at);
			const upload = await finishUpload(trx, receiving.id, {
				status: 'accepted',
				kind: reading.kind,
				received_at: at
			});
			if (!upload) throw abandoned();
			const revision = await insertRevision(trx, {
				eventId: id,
				supplierOrganisationId: actor.organisationId,
				source: 'upload',
				uploadId: upload.id,
				submittedBy: actor.id,
				submittedAt: at,
				bid,
				itemIds: new Map(items.map((i) => [i.ref, i.id])),
				round
			});
			// The trail's lock queues every bid of the event until its commit, so it comes after the bid's
			// rows; the receipt quotes the trail's head, this entry.
			await appendTrail(trx, {
				eventId: id,
				actor,
				action: 'upload accepted',
				detail: {
					supplier: actor.organisationName,
					revision: revision.number,
					upload: upload.id,
					commitment,
					...(round > 1 ? { round } : {})
				},
				at
			});
			await mailReceipt(trx, actor, held, revision, context, {
				fileName: upload.file_name,
				sha256,
				lines: bid.lines.length
			});
			return { revision, upload };
		});
		return { ok: true, revision, upload, sha256 };
	} catch (error) {
		await refuseUpload(receiving);
		throw error;
	}
}

const abandoned = () =>
	new RuleViolation(
		'The upload took too long to complete and was not kept; your current bid is unchanged. Upload the file again.',
		'file',
		409
	);

/**
 * Step 3, refused: the row first (so it never claims a file that is gone), then the object, only when
 * this request moved the row (a commit whose answer was lost leaves it accepted, with its file). Failing
 * here is logged, not thrown: the caller answers the first error, and the sweep finishes what was left.
 */
async function refuseUpload(upload: UploadRow): Promise<void> {
	try {
		if (await finishUpload(db(), upload.id, { status: 'refused' })) await deleteObject(upload.storage_key);
	} catch (error) {
		console.error(
			JSON.stringify({
				level: 'error',
				source: 'uploads',
				message: `upload ${upload.id} not yet refused (the sweep will): ${(error as Error).message}`
			})
		);
	}
}

/** The receipt, queued in the transaction that records the bid. */
async function mailReceipt(
	trx: Db,
	actor: SessionUser,
	event: EventRow,
	revision: RevisionRow,
	context: RequestContext,
	detail: { fileName: string | null; sha256: string | null; lines: number }
): Promise<void> {
	// The receipt carries the trail's head, so the supplier keeps it outside the database.
	const mail = await eventMail(trx, event, context.origin, '');
	await enqueueMail(trx, [
		bidReceiptMail(actor.email, mail, {
			revision: revision.number,
			receivedAt: revision.submitted_at.toISOString(),
			...detail
		})
	]);
}

/** Prices typed in the on-screen table, with the same checks as an upload. */
export async function submitScreen(
	actor: SessionUser,
	id: string,
	entries: { item: string; cells: (string | null)[] }[],
	capacity: string | null,
	context: RequestContext,
	/** The currency of the whole on-screen bid, for events that allow others; null: the event's. */
	currency: string | null = null,
	/** Answers to the supplier-answered criteria, by criterion ref. */
	answers: Record<string, string | null> = {}
): Promise<SubmitOutcome> {
	const event = await supplierEvent(actor, id);
	// Until the event's deadline, or in a later round the supplier is invited to, until that round's.
	await biddingRound(db(), event, actor.organisationId);
	const items = await listItems(db(), id);
	const parsed = parseScreenPrices(
		sheetEvent(event, items, await listRates(db(), id), await listCriteria(db(), id)),
		entries,
		capacity,
		currency,
		answers
	);
	if (!parsed.ok)
		return {
			ok: false,
			problems: parsed.problems.slice(0, MAX_PROBLEMS_KEPT),
			problemCount: parsed.problems.length,
			upload: null
		};
	const revision = await db().transaction(async (trx) => {
		const held = (await holdEvent(trx, id))!;
		const at = now();
		const round = await biddingRound(trx, held, actor.organisationId, at);
		const revision = await insertRevision(trx, {
			eventId: id,
			supplierOrganisationId: actor.organisationId,
			source: 'screen',
			uploadId: null,
			submittedBy: actor.id,
			submittedAt: at,
			bid: parsed.bid,
			itemIds: new Map(items.map((i) => [i.ref, i.id])),
			round
		});
		// The trail's lock queues every bid of the event until its commit, so it comes after the bid's
		// rows; the receipt quotes the trail's head, this entry.
		await appendTrail(trx, {
			eventId: id,
			actor,
			action: 'on-screen bid received',
			detail: {
				supplier: actor.organisationName,
				revision: revision.number,
				...(round > 1 ? { round } : {})
			},
			at
		});
		await mailReceipt(trx, actor, event, revision, context, {
			fileName: null,
			sha256: null,
			lines: parsed.bid.lines.length
		});
		return revision;
	});
	return { ok: true, revision, upload: null, sha256: null };
}

export async function withdraw(
	actor: SessionUser,
	id: string,
	context: RequestContext
): Promise<RevisionRow> {
	const event = await supplierEvent(actor, id);
	const revision = await db().transaction(async (trx) => {
		const held = (await holdEvent(trx, id))!;
		const at = now();
		const round = await biddingRound(trx, held, actor.organisationId, at);
		await lockSupplierBid(trx, id, actor.organisationId);
		const own = await listOwnRevisions(trx, id, actor.organisationId);
		if (!own.length || own[0]!.source === 'withdrawal')
			throw new RuleViolation('There is no bid to withdraw.', undefined, 409);
		const revision = await insertRevision(trx, {
			eventId: id,
			supplierOrganisationId: actor.organisationId,
			source: 'withdrawal',
			uploadId: null,
			submittedBy: actor.id,
			submittedAt: at,
			bid: null,
			itemIds: new Map(),
			round
		});
		// The trail's lock queues every bid of the event until its commit, so it comes after the bid's rows.
		await appendTrail(trx, {
			eventId: id,
			actor,
			action: 'bid withdrawn',
			detail: {
				supplier: actor.organisationName,
				revision: revision.number,
				...(round > 1 ? { round } : {})
			},
			at
		});
		await enqueueMail(trx, [
			withdrawalMail(
				actor.email,
				await eventMail(trx, event, context.origin, ''),
				revision.submitted_at.toISOString()
			)
		]);
		return revision;
	});
	return revision;
}

export interface SupplierBidView {
	current: VisibleBid | null;
	/** After a withdrawal, the last revision with prices: the on-screen grid starts from it again. */
	lastPriced: VisibleBid | null;
	revisions: RevisionRow[];
	/** The latest uploads (at most 50), and how many there are in all. */
	uploads: UploadRow[];
	uploadCount: number;
}

/** The supplier's own bid, revisions and uploads (with their reports). */
export async function ownBid(actor: SessionUser, id: string, revision?: number): Promise<SupplierBidView> {
	const event = await supplierEvent(actor, id);
	const [current, revisions, uploads] = await Promise.all([
		visibleBids(db(), event.id, actor.organisationId, now(), {
			supplierOrganisationId: actor.organisationId,
			revision
		}),
		listOwnRevisions(db(), event.id, actor.organisationId),
		listUploads(db(), event.id, actor.organisationId)
	]);
	const latest = current[0] ?? null;
	const priced =
		latest?.source === 'withdrawal' ? revisions.find((r) => r.source !== 'withdrawal')?.number : undefined;
	const lastPriced =
		priced === undefined
			? null
			: ((
					await visibleBids(db(), event.id, actor.organisationId, now(), {
						supplierOrganisationId: actor.organisationId,
						revision: priced
					})
				)[0] ?? null);
	return { current: latest, lastPriced, revisions, uploads, uploadCount: uploads[0]?.uploads_in_all ?? 0 };
}

/** Who submitted and when, for the buying organisation's staff; never prices, never files. */
export async function submissions(actor: SessionUser, id: string): Promise<Submission[]> {
	const access = await eventFor(actor, id);
	if (access.view !== 'staff') throw new RuleViolation('Suppliers do not see other bidders.', undefined, 403);
	return listSubmissions(db(), id);
}

/** Every current bid with prices, for staff, once the deadline has passed; 403 before. */
export async function openedBids(actor: SessionUser, id: string): Promise<VisibleBid[]> {
	const event = await evaluationEvent(actor, id);
	if (['draft', 'open'].includes(effectiveState(event))) {
		throw new RuleViolation(
			`Bids are sealed until the deadline, ${formatInZone(event.deadline, event.time_zone)} (${event.time_zone}).`,
			undefined,
			403
		);
	}
	return visibleBids(db(), id, actor.organisationId, now());
}
