// Uploads and sealed bids. Rows with prices (bid lines, price breaks, bundle offers) are read only
// through the database function visible_bid_revisions(event, viewer organisation, now): a supplier sees
// its own, the buying organisation sees every bid once the deadline has passed, and nobody else anything.
import type { ParsedBid, SheetProblem } from '../shapes';
import { answersOf, insertAnswers } from './criteria';
import type { Db } from './knex';

export interface UploadRow {
	id: string;
	event_id: string;
	supplier_organisation_id: string;
	uploaded_by: number;
	storage_key: string;
	/** Of the supplier's own file: for its own pages and receipt, never shown to the buying side. */
	sha256: string;
	size_bytes: string;
	/** SHA-256 over commitment_salt || file: what the trail shows; the salt is revealed at the opening. */
	commitment: string | null;
	commitment_salt: string | null;
	file_name: string;
	kind: 'xlsx' | 'csv' | null;
	/**
	 * "receiving" from before its file is stored until it is read; then "accepted" (a revision holds it),
	 * "rejected" (kept with its report) or "refused" (never a bid: its file is deleted, or being deleted).
	 */
	status: 'receiving' | 'accepted' | 'rejected' | 'refused';
	/** At most the first problems found (MAX_PROBLEMS_KEPT); problem_count is how many there were. */
	report: SheetProblem[];
	problem_count: number;
	received_at: Date;
}

export interface RevisionRow {
	id: string;
	event_id: string;
	supplier_organisation_id: string;
	number: number;
	source: 'upload' | 'screen' | 'withdrawal';
	upload_id: string | null;
	capacity: string | null;
	/** ISO 4217 code of the revision's prices; null: the event currency. */
	currency: string | null;
	submitted_by: number;
	submitted_at: Date;
	/** The round of bids it belongs to: 1 up to the event's deadline, then 2, 3… (db/rounds.ts). */
	round: number;
}

/** Problems kept in an upload's report and sent with it; the total is kept in problem_count. */
export const MAX_PROBLEMS_KEPT = 100;

const uploadColumns = (db: Db) => [
	'id',
	'event_id',
	'supplier_organisation_id',
	'uploaded_by',
	'storage_key',
	'sha256',
	'size_bytes',
	'commitment',
	'commitment_salt',
	'file_name',
	'kind',
	'status',
	// Reports stored before the cap may hold hundreds of thousands of problems: never read them whole.
	db.raw(`jsonb_path_query_array(report, '$[0 to ${MAX_PROBLEMS_KEPT - 1}]') as report`),
	db.raw('coalesce(problem_count, jsonb_array_length(report))::int as problem_count'),
	'received_at'
];

/** What an upload ended as: only these were answered, are shown, and reach the trail. */
const ANSWERED: UploadRow['status'][] = ['accepted', 'rejected'];

export async function insertUpload(
	db: Db,
	upload: Omit<UploadRow, 'id' | 'received_at' | 'size_bytes'> & { size_bytes: number; received_at: Date }
): Promise<UploadRow> {
	const [row] = await db('uploads')
		.insert({
			...upload,
			report: JSON.stringify(upload.report.slice(0, MAX_PROBLEMS_KEPT)),
			problem_count: Math.max(upload.problem_count, upload.report.length)
		})
		.returning(uploadColumns(db));
	return row!;
}

/**
 * Takes the lock on one organisation's bid to one event, until the caller's transaction ends: the uploads
 * it counts against the quota cannot change meanwhile, and its revisions are numbered one after another.
 */
export async function lockSupplierBid(
	trx: Db,
	eventId: string,
	supplierOrganisationId: string
): Promise<void> {
	await trx.raw('select pg_advisory_xact_lock(hashtextextended(?, 0))', [
		`bid:${eventId}:${supplierOrganisationId}`
	]);
}

/**
 * Moves a "receiving" upload to what it ended as; undefined when it is no longer receiving (the sweep
 * refused it as abandoned), so the caller must not go on as if it held the upload.
 */
export async function finishUpload(
	db: Db,
	id: string,
	outcome:
		| { status: 'accepted'; kind: UploadRow['kind']; received_at: Date }
		| {
				status: 'rejected';
				kind: UploadRow['kind'];
				report: SheetProblem[];
				problem_count: number;
				received_at: Date;
		  }
		| { status: 'refused' }
): Promise<UploadRow | undefined> {
	const changes =
		outcome.status === 'rejected'
			? {
					...outcome,
					report: JSON.stringify(outcome.report.slice(0, MAX_PROBLEMS_KEPT)),
					problem_count: Math.max(outcome.problem_count, outcome.report.length)
				}
			: outcome;
	const [row] = await db('uploads')
		.where({ id, status: 'receiving' })
		.update(changes)
		.returning(uploadColumns(db));
	return row as UploadRow | undefined;
}

/**
 * Uploads left "receiving" since before `before` (their request died): marked refused, with the keys
 * whose objects must go. One statement, so an upload finishing at the same moment either wins or loses.
 */
export async function refuseAbandonedUploads(db: Db, before: Date): Promise<string[]> {
	const rows: { storage_key: string }[] = await db('uploads')
		.where({ status: 'receiving' })
		.andWhere('received_at', '<', before)
		.update({ status: 'refused' })
		.returning('storage_key');
	return rows.map((r) => r.storage_key);
}

/** Which of these object keys an upload row holds, and that row's status. */
export async function uploadStatusByKey(db: Db, keys: string[]): Promise<Map<string, UploadRow['status']>> {
	const found = new Map<string, UploadRow['status']>();
	for (let k = 0; k < keys.length; k += 1000) {
		const rows: { storage_key: string; status: UploadRow['status'] }[] = await db('uploads')
			.whereIn('storage_key', keys.slice(k, k + 1000))
			.select('storage_key', 'status');
		for (const row of rows) found.set(row.storage_key, row.status);
	}
	return found;
}

/** Every answered upload's commitment and salt: only for the opening, which reveals them in the trail. */
export function listUploadCommitments(
	db: Db,
	eventId: string
): Promise<Pick<UploadRow, 'id' | 'commitment' | 'commitment_salt'>[]> {
	return db<UploadRow>('uploads')
		.where({ event_id: eventId })
		.whereIn('status', ANSWERED)
		.whereNotNull('commitment')
		.orderBy('received_at')
		.select('id', 'commitment', 'commitment_salt');
}

/** Where every kept bid file is (of one event, or all): for re-wrapping their keys. */
export async function listUploadStorageKeys(db: Db, eventId?: string): Promise<string[]> {
	const rows = await (eventId ? db('uploads').where({ event_id: eventId }) : db('uploads'))
		.whereIn('status', ANSWERED)
		.orderBy('received_at')
		.select('storage_key');
	return rows.map((r: { storage_key: string }) => r.storage_key);
}

/** The latest answered uploads first, at most `limit`, each with how many there are in all. */
export function listUploads(
	db: Db,
	eventId: string,
	supplierOrganisationId: string,
	limit = 50
): Promise<(UploadRow & { uploads_in_all: number })[]> {
	return db('uploads')
		.where({ event_id: eventId, supplier_organisation_id: supplierOrganisationId })
		.whereIn('status', ANSWERED)
		.select([...uploadColumns(db), db.raw('count(*) over ()::int as uploads_in_all')])
		.orderBy('received_at', 'desc')
		.limit(limit) as unknown as Promise<(UploadRow & { uploads_in_all: number })[]>;
}

/**
 * Bytes of every file the organisation uploaded to the event and that is kept or still arriving, accepted
 * or not (the storage quota); refused files are deleted. Under lockSupplierBid, it stays so.
 */
export async function storedUploadBytes(
	db: Db,
	eventId: string,
	supplierOrganisationId: string
): Promise<number> {
	const [{ total }] = await db('uploads')
		.where({ event_id: eventId, supplier_organisation_id: supplierOrganisationId })
		.whereNot({ status: 'refused' })
		.select(db.raw('coalesce(sum(size_bytes), 0)::bigint as total'));
	return Number(total);
}

/** The next revision number; call inside a transaction that holds lockSupplierBid. */
async function nextRevisionNumber(db: Db, eventId: string, supplierOrganisationId: string): Promise<number> {
	const [{ next }] = await db('bid_revisions')
		.where({ event_id: eventId, supplier_organisation_id: supplierOrganisationId })
		.select(db.raw('coalesce(max(number), 0)::int + 1 as next'));
	return next as number;
}

/**
 * A new numbered revision with all its lines, breaks and bundles (a withdrawal has none). Call it in a
 * transaction: it takes lockSupplierBid there, so two revisions of one supplier get numbers in turn.
 */
export async function insertRevision(
	db: Db,
	revision: {
		eventId: string;
		supplierOrganisationId: string;
		source: RevisionRow['source'];
		uploadId: string | null;
		submittedBy: number;
		submittedAt: Date;
		bid: ParsedBid | null;
		itemIds: Map<string, string>;
		round?: number;
	}
): Promise<RevisionRow> {
	await lockSupplierBid(db, revision.eventId, revision.supplierOrganisationId);
	const number = await nextRevisionNumber(db, revision.eventId, revision.supplierOrganisationId);
	const [row] = await db<RevisionRow>('bid_revisions')
		.insert({
			event_id: revision.eventId,
			supplier_organisation_id: revision.supplierOrganisationId,
			number,
			source: revision.source,
			upload_id: revision.uploadId,
			capacity: revision.bid?.capacity === null || !revision.bid ? null : String(revision.bid.capacity),
			currency: revision.bid?.currency ?? null,
			submitted_by: revision.submittedBy,
			submitted_at: revision.submittedAt,
			round: revision.round ?? 1
		})
		.returning('*');
	const bid = revision.bid;
	if (!bid) return row!;
	const lines = bid.lines.map((l) => ({
		revision_id: row!.id,
		item_id: revision.itemIds.get(l.item)!,
		unit_price: l.unitPrice,
		max_quantity: l.maxQuantity,
		pack_size: l.packSize ?? null
	}));
	for (let k = 0; k < lines.length; k += 2000) {
		const stored: { id: string; item_id: string }[] = await db('bid_lines')
			.insert(lines.slice(k, k + 2000))
			.returning(['id', 'item_id']);
		const lineOf = new Map(stored.map((s) => [s.item_id, s.id]));
		const breaks = bid.lines.slice(k, k + 2000).flatMap((l) =>
			l.priceBreaks.map((b) => ({
				bid_line_id: lineOf.get(revision.itemIds.get(l.item)!)!,
				from_quantity: b.fromQuantity,
				unit_price: b.unitPrice
			}))
		);
		for (let j = 0; j < breaks.length; j += 5000) await db('price_breaks').insert(breaks.slice(j, j + 5000));
	}
	for (const bundle of bid.bundles) {
		const [offer] = await db('bundle_offers')
			.insert({ revision_id: row!.id, ref: bundle.ref, price: bundle.price })
			.returning('id');
		await db('bundle_offer_items').insert(
			bundle.items.map((i) => ({
				bundle_offer_id: (offer as { id: string }).id,
				item_id: revision.itemIds.get(i.item)!,
				quantity: i.quantity
			}))
		);
	}
	if (bid.answers) await insertAnswers(db, row!.id, bid.answers);
	return row!;
}

export interface Submission {
	supplier_organisation_id: string;
	supplier_name: string;
	revisions: number;
	latest_number: number;
	latest_source: RevisionRow['source'];
	latest_at: Date;
}

/**
 * Who has submitted and when: no prices, no files, nothing derived from a bid's contents (no hashes,
 * sizes or counts of lines). For the buying organisation at any time.
 */
export function listSubmissions(db: Db, eventId: string): Promise<Submission[]> {
	return db
		.select('latest.*', 'o.name as supplier_name')
		.from(
			db('bid_revisions')
				.where({ event_id: eventId })
				.distinctOn('supplier_organisation_id')
				.select(
					'supplier_organisation_id',
					'number as latest_number',
					'source as latest_source',
					'submitted_at as latest_at',
					db.raw('count(*) over (partition by supplier_organisation_id)::int as revisions')
				)
				.orderBy([{ column: 'supplier_organisation_id' }, { column: 'number', order: 'desc' }])
				.as('latest')
		)
		.join('organisations as o', 'o.id', 'latest.supplier_organisation_id')
		.orderBy('latest.latest_at') as unknown as Promise<Submission[]>;
}

export function listOwnRevisions(
	db: Db,
	eventId: string,
	supplierOrganisationId: string
): Promise<RevisionRow[]> {
	return db<RevisionRow>('bid_revisions')
		.where({ event_id: eventId, supplier_organisation_id: supplierOrganisationId })
		.orderBy('number', 'desc');
}

export interface VisibleLine {
	revision_id: string;
	supplier_organisation_id: string;
	revision_number: number;
	item_ref: string;
	unit_price: string;
	max_quantity: string | null;
	pack_size: string | null;
}

export interface VisibleBid {
	supplierOrganisationId: string;
	supplierName: string;
	revision: number;
	/** The round of bids this revision belongs to. */
	round: number;
	submittedAt: Date;
	source: RevisionRow['source'];
	capacity: string | null;
	/** ISO 4217 code of every price of this bid (the event currency when the revision names none). */
	currency: string;
	lines: {
		item: string;
		unitPrice: string;
		maxQuantity: string | null;
		packSize: string | null;
		priceBreaks: { fromQuantity: string; unitPrice: string }[];
	}[];
	bundles: { ref: string; price: string; items: { item: string; quantity: string }[] }[];
	/** The revision's answers to the event's supplier-answered criteria, by criterion ref. */
	answers: Record<string, number>;
}

interface PricedLineRow {
	id: string;
	revision_id: string;
	item: string;
	unit_price: string;
	max_quantity: string | null;
	pack_size: string | null;
}

interface BreakRow {
	bid_line_id: string;
	from_quantity: string;
	unit_price: string;
}

interface BundleItemRow {
	id: string;
	revision_id: string;
	ref: string;
	price: string;
	item: string;
	quantity: string;
}

/**
 * The current bid (latest revision) of every supplier the viewer may see, with prices. A withdrawn bid
 * is its withdrawal revision with no lines. `revision` picks one revision number of a single supplier;
 * `round` the latest revision up to that round. The latest is among the revisions the viewer may see:
 * while a round is sealed, the buyer sees each supplier's latest of the opened rounds.
 */
export async function visibleBids(
	db: Db,
	eventId: string,
	viewerOrganisationId: string,
	now: Date,
	options: {
		supplierOrganisationId?: string;
		revision?: number;
		/** Only the lines of these items (ids), and no bundle offers: one page of a tabulation. */
		itemIds?: string[];
		round?: number;
	} = {}
): Promise<VisibleBid[]> {
	const visible = db
		.select(
			'v.*',
			db.raw('row_number() over (partition by v.supplier_organisation_id order by v.number desc) as latest')
		)
		.from(db.raw('visible_bid_revisions(?, ?, ?) as v', [eventId, viewerOrganisationId, now]))
		.modify((q) => {
			if (options.supplierOrganisationId)
				void q.where('v.supplier_organisation_id', options.supplierOrganisationId);
			if (options.revision !== undefined) void q.where('v.number', options.revision);
			if (options.round !== undefined) void q.where('v.round', '<=', options.round);
		});
	const revisions = db
		.select('r.*', 'o.name as supplier_name')
		.from(visible.as('r'))
		.join('organisations as o', 'o.id', 'r.supplier_organisation_id')
		.join('events as e', 'e.id', 'r.event_id')
		.select('e.currency as event_currency')
		.where('r.latest', 1);
	const rows = (await revisions.orderBy('o.name')) as (RevisionRow & {
		supplier_name: string;
		event_currency: string;
	})[];
	if (!rows.length) return [];
	const ids = rows.map((r) => r.id);
	const { itemIds } = options;
	const [lines, breaks, bundles, answers] = await Promise.all([
		db('bid_lines as l')
			.join('items as i', 'i.id', 'l.item_id')
			.whereIn('l.revision_id', ids)
			.modify((q) => {
				if (itemIds) void q.whereIn('l.item_id', itemIds);
			})
			.select('l.id', 'l.revision_id', 'i.ref as item', 'l.unit_price', 'l.max_quantity', 'l.pack_size')
			.orderBy('i.position') as Promise<PricedLineRow[]>,
		db('price_breaks as b')
			.join('bid_lines as l', 'l.id', 'b.bid_line_id')
			.whereIn('l.revision_id', ids)
			.modify((q) => {
				if (itemIds) void q.whereIn('l.item_id', itemIds);
			})
			.select('b.bid_line_id', 'b.from_quantity', 'b.unit_price')
			.orderBy('b.from_quantity') as Promise<BreakRow[]>,
		itemIds
			? Promise.resolve([] as BundleItemRow[])
			: (db('bundle_offers as b')
					.join('bundle_offer_items as bi', 'bi.bundle_offer_id', 'b.id')
					.join('items as i', 'i.id', 'bi.item_id')
					.whereIn('b.revision_id', ids)
					.select('b.id', 'b.revision_id', 'b.ref', 'b.price', 'i.ref as item', 'bi.quantity')
					.orderBy(['b.ref', 'i.position']) as Promise<BundleItemRow[]>),
		answersOf(db, ids)
	]);
	const breaksOf = new Map<string, { fromQuantity: string; unitPrice: string }[]>();
	for (const b of breaks) {
		const list = breaksOf.get(b.bid_line_id) ?? [];
		list.push({ fromQuantity: b.from_quantity, unitPrice: b.unit_price });
		breaksOf.set(b.bid_line_id, list);
	}
	return rows.map((r) => {
		const offers = new Map<string, VisibleBid['bundles'][number]>();
		for (const b of bundles.filter((x) => x.revision_id === r.id)) {
			const offer: VisibleBid['bundles'][number] = offers.get(b.id) ?? {
				ref: b.ref,
				price: b.price,
				items: []
			};
			offer.items.push({ item: b.item, quantity: b.quantity });
			offers.set(b.id, offer);
		}
		return {
			supplierOrganisationId: r.supplier_organisation_id,
			supplierName: r.supplier_name,
			revision: r.number,
			round: r.round,
			submittedAt: r.submitted_at,
			source: r.source,
			capacity: r.capacity,
			currency: r.currency ?? r.event_currency,
			lines: lines
				.filter((l) => l.revision_id === r.id)
				.map((l) => ({
					item: l.item,
					unitPrice: l.unit_price,
					maxQuantity: l.max_quantity,
					packSize: l.pack_size,
					priceBreaks: breaksOf.get(l.id) ?? []
				})),
			bundles: [...offers.values()],
			answers: answers.get(r.id) ?? {}
		};
	});
}

/** A supplier's latest revision in each event it has bid in: number, source and time, never a price. */
export function latestOwnRevisions(
	db: Db,
	supplierOrganisationId: string
): Promise<{ event_id: string; number: number; source: RevisionRow['source']; submitted_at: Date }[]> {
	return db('bid_revisions')
		.distinctOn('event_id')
		.where({ supplier_organisation_id: supplierOrganisationId })
		.orderBy([{ column: 'event_id' }, { column: 'number', order: 'desc' }])
		.select('event_id', 'number', 'source', 'submitted_at');
}
