// The decision trail: every step of an event that an auditor needs, in an append-only table whose
// entries are chained by SHA-256 (each hash covers the previous hash and the entry's canonical JSON), so
// a changed, removed or reordered entry is found by walking the chain.
import { createHash } from 'node:crypto';
import type { SessionUser } from './auth/session-user';
import { now } from './clock';
import { db, type Db } from './db/knex';

export interface TrailEntry {
	event_id: string;
	seq: number;
	at: Date;
	actor_user_id: number | null;
	actor: string;
	action: string;
	detail: Record<string, unknown>;
	previous_hash: string | null;
	hash: string;
}

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

/** What the hash covers: every field but the hashes themselves, the previous one as the prefix. */
function entryHash(entry: Omit<TrailEntry, 'hash'> & { hash?: string }): string {
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

export type Actor = Pick<SessionUser, 'id' | 'name' | 'email'> | 'system';

/**
 * Appends one entry to the event's trail inside the caller's transaction (or its own), under a lock
 * on the event's chain so concurrent appends queue rather than fork it.
 */
export async function appendTrail(
	into: Db | null,
	entry: { eventId: string; actor: Actor; action: string; detail?: Record<string, unknown>; at?: Date }
): Promise<TrailEntry> {
	const work = async (trx: Db) => {
		await trx.raw('select pg_advisory_xact_lock(hashtext(?))', [`trail:${entry.eventId}`]);
		const last = await trx('trail_entries')
			.where({ event_id: entry.eventId })
			.orderBy('seq', 'desc')
			.first('seq', 'hash');
		const body: Omit<TrailEntry, 'hash'> = {
			event_id: entry.eventId,
			seq: (last?.seq ?? 0) + 1,
			// Millisecond precision, as JavaScript and the stored value agree on it.
			at: new Date(Math.floor((entry.at ?? now()).getTime())),
			actor_user_id: entry.actor === 'system' ? null : entry.actor.id,
			actor: entry.actor === 'system' ? 'Tenderloom (system)' : `${entry.actor.name} <${entry.actor.email}>`,
			action: entry.action,
			detail: JSON.parse(JSON.stringify(entry.detail ?? {})) as Record<string, unknown>,
			previous_hash: last?.hash ?? null
		};
		const row = { ...body, hash: entryHash(body) };
		await trx('trail_entries').insert({ ...row, detail: JSON.stringify(row.detail) });
		return row;
	};
	const target = into ?? db();
	return 'isTransaction' in target && target.isTransaction ? work(target) : db().transaction(work);
}

export async function listTrail(from: Db, eventId: string): Promise<TrailEntry[]> {
	const rows = (await from('trail_entries').where({ event_id: eventId }).orderBy('seq')) as (TrailEntry & {
		previous_hash: string | null;
	})[];
	return rows.map((r) => ({
		...r,
		seq: Number(r.seq),
		previous_hash: r.previous_hash?.trim() ?? null,
		hash: r.hash.trim()
	}));
}

export type Verification =
	| { intact: true; entries: number; text: string }
	| { intact: false; entries: number; firstBroken: number; reason: string; text: string };

/** Walks the chain: every entry must follow the one before and hash to what it says. */
export function verifyTrail(entries: TrailEntry[]): Verification {
	let previous: string | null = null;
	for (const [k, entry] of entries.entries()) {
		const expectedSeq = k + 1;
		const problem =
			entry.seq !== expectedSeq
				? `entry ${expectedSeq} is missing or out of order`
				: entry.previous_hash !== previous
					? `entry ${entry.seq} does not follow entry ${entry.seq - 1}`
					: entryHash(entry) !== entry.hash
						? `entry ${entry.seq} was changed after it was written`
						: null;
		if (problem)
			return {
				intact: false,
				entries: entries.length,
				firstBroken: expectedSeq,
				reason: problem,
				text: `broken at entry ${expectedSeq}: ${problem}`
			};
		previous = entry.hash;
	}
	return { intact: true, entries: entries.length, text: `intact, ${entries.length} entries` };
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
	sheet.addRow(['Seq', 'At (UTC)', 'Actor', 'Action', 'Detail (JSON)', 'Previous hash', 'Hash']).font = {
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
			e.hash
		]);
	sheet.columns.forEach((c, i) => (c.width = [6, 26, 36, 24, 80, 66, 66][i] ?? 20));
	return Buffer.from(await workbook.xlsx.writeBuffer());
}
