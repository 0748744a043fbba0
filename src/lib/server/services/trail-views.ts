import type { SessionUser } from '../auth/session-user';
import { db } from '../db/knex';
import { InvalidCheckpoint, latestCheckpoint } from '../storage/trail-checkpoints';
import { configuredMacKeys, listTrail, trailWorkbook, verifyTrail, type AnchorState } from '../trail';
import { evaluationEvent } from './events';

/** What the verification can and cannot find, said the same way on the page, in JSON and in the workbook. */
export const TRAIL_GUARANTEES = {
	detected: [
		'an entry changed, removed or put out of order',
		'the newest entries removed, back to the latest checkpoint kept in the object store',
		'an entry added or rewritten without Tenderloom’s signing key, even with every hash recomputed',
		'an entry rewritten with the signing key, at or before the latest checkpoint'
	],
	notDetected: [
		'the newest entries removed by someone who can also delete checkpoints in the object store (receipts and notices already sent still show the entry and hash they carried)',
		'entries forged or rewritten by someone who holds the signing key and can write to both the database and the object store',
		'a step that was never written to the trail',
		'entries after the latest checkpoint rest on their signature alone; they are shown as not yet anchored'
	]
};

async function anchorOf(eventId: string): Promise<AnchorState> {
	try {
		const checkpoint = await latestCheckpoint(eventId);
		return checkpoint ? { kind: 'checkpoint', checkpoint } : { kind: 'none' };
	} catch (error) {
		if (error instanceof InvalidCheckpoint) return { kind: 'invalid', problem: error.message };
		return { kind: 'unavailable', problem: 'the object store could not be reached' };
	}
}

/** The trail of an event and whether its chain holds: for its buyers, approvers and auditors only. */
export async function eventTrail(user: SessionUser, id: string) {
	const event = await evaluationEvent(user, id, 'The decision trail is for the buying organisation.');
	const [entries, anchor] = await Promise.all([listTrail(db(), id), anchorOf(id)]);
	return {
		event,
		entries,
		verification: verifyTrail(entries, { keys: configuredMacKeys(), anchor }),
		anchor
	};
}

export async function eventTrailJson(user: SessionUser, id: string) {
	const { event, entries, verification, anchor } = await eventTrail(user, id);
	return {
		event: {
			id: event.id,
			reference: event.reference,
			title: event.title,
			timeZone: event.time_zone,
			currency: event.currency
		},
		verification,
		checkpoint:
			anchor.kind === 'checkpoint'
				? { seq: anchor.checkpoint.seq, hash: anchor.checkpoint.hash, writtenAt: anchor.checkpoint.writtenAt }
				: null,
		guarantees: TRAIL_GUARANTEES,
		entries: entries.map((e) => ({
			seq: e.seq,
			at: e.at.toISOString(),
			actor: e.actor,
			action: e.action,
			detail: e.detail,
			previousHash: e.previous_hash,
			hash: e.hash,
			mac: e.mac
		}))
	};
}

export async function eventTrailXlsx(user: SessionUser, id: string) {
	const { event, entries, verification } = await eventTrail(user, id);
	return { body: await trailWorkbook(event.reference, entries, verification), reference: event.reference };
}
