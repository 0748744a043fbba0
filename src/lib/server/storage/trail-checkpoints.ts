// Checkpoints of the decision trail in the object store, outside the database: one object per anchored
// entry (event, seq, hash, time), never overwritten. A database owner who removes the newest entries or
// rewrites the chain cannot reach these, so verification compares the chain with the latest one.
import { z } from 'zod';
import { getObject, listKeys, putObject } from './index';

const checkpointSchema = z.object({
	eventId: z.string(),
	seq: z.number().int().positive(),
	hash: z.string().regex(/^[0-9a-f]{64}$/),
	entryAt: z.string(),
	writtenAt: z.string()
});

export type TrailCheckpoint = z.infer<typeof checkpointSchema>;

const prefix = (eventId: string) => `trail-checkpoints/${eventId}/`;
// Zero-padded, so the store's lexical order is the order of the chain.
const keyOf = (eventId: string, seq: number) => `${prefix(eventId)}${String(seq).padStart(10, '0')}.json`;

export async function writeCheckpoint(checkpoint: TrailCheckpoint): Promise<void> {
	await putObject(
		keyOf(checkpoint.eventId, checkpoint.seq),
		Buffer.from(JSON.stringify(checkpoint)),
		'application/json'
	);
}

/** A checkpoint object that is there but is not one this module wrote: a sign of tampering. */
export class InvalidCheckpoint extends Error {}

/**
 * The checkpoint of the highest entry anchored so far, or null when none was written. Throws
 * InvalidCheckpoint for an unreadable object, and the store's own error when it cannot be reached.
 */
export async function latestCheckpoint(eventId: string): Promise<TrailCheckpoint | null> {
	const keys = (await listKeys(prefix(eventId))).sort();
	const last = keys.at(-1);
	if (!last) return null;
	const body = (await getObject(last)).toString('utf8');
	let parsed: ReturnType<typeof checkpointSchema.safeParse> | undefined;
	try {
		parsed = checkpointSchema.safeParse(JSON.parse(body));
	} catch {
		parsed = undefined;
	}
	if (!parsed?.success || parsed.data.eventId !== eventId || keyOf(eventId, parsed.data.seq) !== last)
		throw new InvalidCheckpoint(`the checkpoint ${last.slice(prefix(eventId).length)} is not valid`);
	return parsed.data;
}
