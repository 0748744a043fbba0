// The decision trail: every step of an event that an auditor needs, in a table the app may only append
// to and read. Entries are chained by SHA-256 (each hash covers the previous hash and the entry's
// canonical JSON), so a changed, removed or reordered entry is found by walking the chain. Each entry
// also carries a keyed MAC (HMAC-SHA256 with TRAIL_MAC_KEY, a key the database never holds), so an
// entry forged or rewritten by someone with only database access, hashes recomputed or not, is found.
// After each append commits, a checkpoint (seq, hash) goes to the object store, and receipts and
// notices carry the head: removing the newest entries is found against the latest checkpoint.
import { createHash, createHmac, timingSafeEqual } from 'node:crypto';
import type { Knex } from 'knex';
import type { SessionUser } from './auth/session-user';
import { now } from './clock';
import { config } from './config';
import { db, type Db } from './db/knex';
import { insertTrailEntry, lastTrailEntry, listTrailRows, lockTrailChain, type TrailRow } from './db/trail';
import { writeCheckpoint, type TrailCheckpoint } from './storage/trail-checkpoints';

/** An entry of the trail, as stored (db/trail.ts). */
export type TrailEntry = TrailRow;

/** JSON with object keys sorted at every level: the same value always gives the same text. */
export function canonicalJson(value: unknown): string {
	if (value === null || typeof value !== 'object') return JSON.stringify(value ?? null);
	if (value instanceof Date) return JSON.stringify(value.toISOString());
	if (Array.isArray(value)) return `[${value.map(canonicalJson).join(',')}]`;
	const entries = Object.entries(value as Record<string, unknown>)
		.filter(([, v]) => v !== undefined)
		.sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0));
	return `{${entries.map(([k, v]) => `${JSON.stringify(k)}:${canonicalJson(v)}`).join(',')}}`;
}

export const sha256 = (text: string) => createHash('sha256').update(text).digest('hex');

/** What the hash covers: every field but the hashes and the MAC, the previous hash as the prefix. */
export function entryHash(entry: Omit<TrailEntry, 'hash' | 'mac' | 'mac_key_id'>): string {
	const body = {
		event_id: entry.event_id,
		seq: entry.seq,
		at: entry.at.toISOString(),
		actor_user_id: entry.actor_user_id,
		actor: entry.actor,
		action: entry.action,
		detail: entry.detail
	};
	return sha256(`${entry.previous_hash ?? ''}\n${canonicalJson(body)}`);
}

/** A trail key: its id (stored beside each MAC, so a rotated key still verifies old entries) and secret. */
export interface MacKey {
	id: string;
	secret: string;
}

// The id is a fingerprint of the key, not the key: it says which key to try and reveals nothing of it.
export const macKey = (secret: string): MacKey => ({
	id: sha256(`tenderloom trail key id\n${secret}`).slice(0, 16),
	secret
});

/** The hash binds the whole entry and its place in the chain, so the MAC need only cover the hash. */
export const entryMac = (key: MacKey, hash: string) =>
	createHmac('sha256', key.secret).update(`tenderloom trail entry\n${hash}`).digest('hex');

/** The key new entries are signed with, then the earlier ones that still verify. */
export function configuredMacKeys(): MacKey[] {
	const settings = config();
	const old = (settings.TRAIL_MAC_OLD_KEYS ?? '')
		.split(',')
		.map((k) => k.trim())
		.filter(Boolean);
	return [settings.TRAIL_MAC_KEY, ...old].map(macKey);
}

export type Actor = Pick<SessionUser, 'id' | 'name' | 'email'> | 'system';

function anchor(entry: TrailEntry): Promise<void> {
	return writeCheckpoint({
		eventId: entry.event_id,
		seq: entry.seq,
		hash: entry.hash,
		entryAt: entry.at.toISOString(),
		writtenAt: now().toISOString()
	}).catch((error: Error) =>
		// The entry stands; until a later append is anchored, verification reports it as not anchored.
		console.error(
			JSON.stringify({
				level: 'error',
				source: 'trail',
				message: `checkpoint of entry ${entry.seq} of event ${entry.event_id} not written: ${error.message}`
			})
		)
	);
}

/**
 * Appends one entry to the event's trail inside the caller's transaction (or its own), under a lock
 * on the event's chain so concurrent appends queue rather than fork it. The checkpoint is written
 * once the outermost transaction has committed, never for an entry that was rolled back.
 */
export async function appendTrail(
	into: Db | null,
	entry: { eventId: string; actor: Actor; action: string; detail?: Record<string, unknown>; at?: Date }
): Promise<TrailEntry> {
	const [key] = configuredMacKeys();
	const work = async (trx: Db) => {
		await lockTrailChain(trx, entry.eventId);
		const last = await lastTrailEntry(trx, entry.eventId);
		const body = {
			event_id: entry.eventId,
			seq: (last?.seq ?? 0) + 1,
			// Millisecond precision, as JavaScript and the stored value agree on it.
			at: new Date(Math.floor((entry.at ?? now()).getTime())),
			actor_user_id: entry.actor === 'system' ? null : entry.actor.id,
			actor: entry.actor === 'system' ? 'Tenderloom (system)' : `${entry.actor.name} <${entry.actor.email}>`,
			action: entry.action,
			detail: JSON.parse(JSON.stringify(entry.detail ?? {})) as Record<string, unknown>,
			previous_hash: (last?.hash as string | undefined)?.trim() ?? null
		};
		const hash = entryHash(body);
		const row: TrailEntry = { ...body, hash, mac: entryMac(key!, hash), mac_key_id: key!.id };
		await insertTrailEntry(trx, row);
		return row;
	};
	const target = into ?? db();
	if ('isTransaction' in target && target.isTransaction) {
		const row = await work(target);
		let outermost = target as Knex.Transaction;
		while (outermost.parentTransaction) outermost = outermost.parentTransaction;
		void outermost.executionPromise.then(
			() => anchor(row),
			() => undefined
		);
		return row;
	}
	const row = await db().transaction(work);
	await anchor(row);
	return row;
}

export async function listTrail(from: Db, eventId: string): Promise<TrailEntry[]> {
	const rows = await listTrailRows(from, eventId);
	return rows.map((r) => ({
		...r,
		seq: Number(r.seq),
		previous_hash: r.previous_hash?.trim() ?? null,
		hash: r.hash.trim(),
		mac: r.mac?.trim() ?? null,
		mac_key_id: r.mac_key_id ?? null
	}));
}

/** The newest entry of an event's trail: what receipts and notices carry, so the head is kept outside. */
export async function trailHead(from: Db, eventId: string): Promise<{ seq: number; hash: string } | null> {
	const row = await lastTrailEntry(from, eventId);
	return row ? { seq: Number(row.seq), hash: String(row.hash).trim() } : null;
}

/** What the chain was compared with outside the database. */
export type AnchorState =
	| { kind: 'checkpoint'; checkpoint: TrailCheckpoint }
	| { kind: 'none' }
	| { kind: 'unavailable'; problem: string }
	| { kind: 'invalid'; problem: string };

export interface Verification {
	intact: boolean;
	entries: number;
	/** The first entry that is wrong or missing; only when broken. */
	firstBroken?: number;
	reason?: string;
	/** The highest entry a checkpoint outside the database vouches for (0: none). */
	anchoredTo: number;
	/** Entries after the latest checkpoint: not yet anchored outside the database. */
	unanchored: number;
	/** Entries written before entries were signed (a prefix of the chain, from before the MAC). */
	unsigned: number;
	text: string;
}

const range = (from: number, to: number) => (from === to ? `entry ${from}` : `entries ${from}–${to}`);

const sameHex = (a: string, b: string) =>
	a.length === b.length && timingSafeEqual(Buffer.from(a), Buffer.from(b));

/**
 * Walks the chain (every entry must follow the one before, hash to what it says and carry a valid MAC),
 * then compares it with the latest checkpoint outside the database: a checkpoint beyond the last entry
 * means the newest entries were removed, a different hash at the checkpoint's entry means a rewrite.
 */
export function verifyTrail(
	entries: TrailEntry[],
	options: { keys: MacKey[]; anchor: AnchorState }
): Verification {
	const keys = new Map(options.keys.map((k) => [k.id, k]));
	const broken = (at: number, reason: string, text = `broken at entry ${at}: ${reason}`): Verification => ({
		intact: false,
		entries: entries.length,
		firstBroken: at,
		reason,
		anchoredTo: 0,
		unanchored: 0,
		unsigned: 0,
		text
	});
	let previous: string | null = null;
	let unsigned = 0;
	for (const [k, entry] of entries.entries()) {
		const expectedSeq = k + 1;
		const key = entry.mac_key_id ? keys.get(entry.mac_key_id) : undefined;
		const problem =
			entry.seq !== expectedSeq
				? `entry ${expectedSeq} is missing or out of order`
				: entry.previous_hash !== previous
					? `entry ${entry.seq} does not follow entry ${entry.seq - 1}`
					: entryHash(entry) !== entry.hash
						? `entry ${entry.seq} was changed after it was written`
						: entry.mac === null && unsigned === k
							? null
							: entry.mac_key_id && !key
								? `entry ${entry.seq} is signed with a key this server does not hold (key ${entry.mac_key_id}); add it to TRAIL_MAC_OLD_KEYS`
								: !key || !entry.mac || !sameHex(entryMac(key, entry.hash), entry.mac)
									? `entry ${entry.seq} does not carry Tenderloom's signature: it was forged or rewritten outside Tenderloom`
									: null;
		if (problem) return broken(expectedSeq, problem);
		if (entry.mac === null) unsigned++;
		previous = entry.hash;
	}

	const count = entries.length;
	const unsignedText = unsigned ? `; ${range(1, unsigned)} predate signed entries` : '';
	const anchor = options.anchor;
	if (anchor.kind === 'invalid')
		return broken(
			count + 1,
			anchor.problem,
			`not verified: ${anchor.problem}, so removed entries cannot be ruled out`
		);
	if (anchor.kind === 'checkpoint') {
		const { seq, hash, writtenAt } = anchor.checkpoint;
		if (seq > count)
			return broken(
				count + 1,
				`${range(count + 1, seq)} ${seq === count + 1 ? 'was' : 'were'} removed: a checkpoint written at ${writtenAt} outside the database records entry ${seq}`,
				`broken after entry ${count}: ${range(count + 1, seq)} ${seq === count + 1 ? 'was' : 'were'} removed (a checkpoint written at ${writtenAt} outside the database records entry ${seq})`
			);
		if (!sameHex(entries[seq - 1]!.hash, hash))
			return broken(
				seq,
				`entry ${seq} differs from its checkpoint written at ${writtenAt}: the trail was rewritten at or before entry ${seq}`
			);
	}
	const anchoredTo = anchor.kind === 'checkpoint' ? anchor.checkpoint.seq : 0;
	const unanchored = count - anchoredTo;
	const anchorText =
		anchor.kind === 'unavailable'
			? `; not compared with its checkpoints (${anchor.problem})`
			: count === 0
				? ''
				: unanchored === 0
					? `, anchored up to entry ${anchoredTo} by a checkpoint outside the database`
					: `; ${range(anchoredTo + 1, count)} ${unanchored === 1 ? 'is' : 'are'} not yet anchored outside the database${anchoredTo ? ` (checkpoint at entry ${anchoredTo})` : ''}`;
	return {
		intact: true,
		entries: count,
		anchoredTo,
		unanchored,
		unsigned,
		text: `intact, ${count} ${count === 1 ? 'entry' : 'entries'}${anchorText}${unsignedText}`
	};
}

export async function trailWorkbook(
	reference: string,
	entries: TrailEntry[],
	verification: Verification
): Promise<Buffer> {
	const { default: ExcelJS } = await import('exceljs');
	const { neutralise } = await import('./sheets/bid-sheet');
	const workbook = new ExcelJS.Workbook();
	workbook.creator = 'Tenderloom';
	const sheet = workbook.addWorksheet('Trail');
	sheet.addRow([`Decision trail of ${neutralise(reference)}`, verification.text]);
	sheet.addRow(['Seq', 'At (UTC)', 'Actor', 'Action', 'Detail (JSON)', 'Previous hash', 'Hash', 'MAC']).font =
		{
			bold: true
		};
	for (const e of entries)
		sheet.addRow([
			e.seq,
			e.at.toISOString(),
			neutralise(e.actor),
			neutralise(e.action),
			neutralise(canonicalJson(e.detail)),
			e.previous_hash ?? '',
			e.hash,
			e.mac ?? ''
		]);
	sheet.columns.forEach((c, i) => (c.width = [6, 26, 36, 24, 80, 66, 66, 66][i] ?? 20));
	return Buffer.from(await workbook.xlsx.writeBuffer());
}
