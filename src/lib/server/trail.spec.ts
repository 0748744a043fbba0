import { describe, expect, it } from 'vitest';
import {
	canonicalJson,
	entryHash,
	entryMac,
	macKey,
	sha256,
	verifyTrail,
	type AnchorState,
	type TrailEntry
} from './trail';

const key = macKey('a trail key of thirty-two characters or more');
const attackerKey = macKey('a key the attacker made up, long enough too');
const noAnchor: AnchorState = { kind: 'none' };

/** Signs an entry as appendTrail does: hash(n) = SHA-256(hash(n-1) + "\n" + canonical JSON), MAC over the hash. */
function signed(body: Omit<TrailEntry, 'hash' | 'mac' | 'mac_key_id'>, withKey = key): TrailEntry {
	const hash = entryHash(body);
	return { ...body, hash, mac: entryMac(withKey, hash), mac_key_id: withKey.id };
}

function chain(actions: string[]): TrailEntry[] {
	const entries: TrailEntry[] = [];
	for (const [k, action] of actions.entries())
		entries.push(
			signed({
				event_id: 'e1',
				seq: k + 1,
				at: new Date(Date.UTC(2027, 0, 1, 9, k)),
				actor_user_id: 7,
				actor: 'Test buyer <b@example.test>',
				action,
				detail: { n: k, nested: { b: 2, a: 1 } },
				previous_hash: entries.at(-1)?.hash ?? null
			})
		);
	return entries;
}

/** What a database owner can do without the key: rewrite entry `at` and recompute every later hash. */
function rewrittenFrom(entries: TrailEntry[], at: number, withKey?: typeof key): TrailEntry[] {
	const out = entries.slice(0, at - 1);
	for (const e of entries.slice(at - 1)) {
		const body = {
			...e,
			detail: e.seq === at ? { n: 99 } : e.detail,
			previous_hash: out.at(-1)?.hash ?? null
		};
		const hash = entryHash(body);
		out.push(withKey ? { ...body, hash, mac: entryMac(withKey, hash) } : { ...body, hash });
	}
	return out;
}

const checkpointOf = (entry: TrailEntry): AnchorState => ({
	kind: 'checkpoint',
	checkpoint: {
		eventId: 'e1',
		seq: entry.seq,
		hash: entry.hash,
		entryAt: entry.at.toISOString(),
		writtenAt: '2027-01-01T10:00:00.000Z'
	}
});

describe('the decision trail chain', () => {
	it('writes objects with sorted keys at every level, so equal values hash equally', () => {
		expect(canonicalJson({ b: 1, a: { d: [3, { f: 1, e: 2 }], c: null } })).toBe(
			'{"a":{"c":null,"d":[3,{"e":2,"f":1}]},"b":1}'
		);
		// SHA-256 of the empty string (FIPS 180-4 test vector, as published in its examples).
		expect(sha256('')).toBe('e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855');
	});

	it('hashes the previous hash and the canonical JSON of the entry', () => {
		const [first, second] = chain(['event created', 'event published']);
		const { hash, mac, mac_key_id, previous_hash, ...body } = second!;
		expect([mac, mac_key_id, previous_hash]).toEqual([entryMac(key, hash), key.id, first!.hash]);
		expect(hash).toBe(sha256(`${first!.hash}\n${canonicalJson({ ...body, at: body.at.toISOString() })}`));
	});

	it('finds an intact chain intact and says when it is not anchored outside the database', () => {
		expect(
			verifyTrail(chain(['event created', 'event published', 'bids opened']), {
				keys: [key],
				anchor: noAnchor
			})
		).toEqual({
			intact: true,
			entries: 3,
			anchoredTo: 0,
			unanchored: 3,
			unsigned: 0,
			text: 'intact, 3 entries; entries 1–3 are not yet anchored outside the database'
		});
	});

	it('finds an intact chain anchored by its latest checkpoint', () => {
		const entries = chain(['a', 'b', 'c']);
		expect(verifyTrail(entries, { keys: [key], anchor: checkpointOf(entries[2]!) })).toMatchObject({
			intact: true,
			anchoredTo: 3,
			unanchored: 0,
			text: 'intact, 3 entries, anchored up to entry 3 by a checkpoint outside the database'
		});
		expect(verifyTrail(entries, { keys: [key], anchor: checkpointOf(entries[1]!) }).text).toBe(
			'intact, 3 entries; entry 3 is not yet anchored outside the database (checkpoint at entry 2)'
		);
	});

	it('finds a changed, a removed and a reordered entry, naming the first broken one', () => {
		const options = { keys: [key], anchor: noAnchor };
		const changed = chain(['a', 'b', 'c']);
		changed[1] = { ...changed[1]!, detail: { n: 99 } };
		expect(verifyTrail(changed, options)).toMatchObject({
			intact: false,
			firstBroken: 2,
			reason: 'entry 2 was changed after it was written'
		});

		const removed = chain(['a', 'b', 'c']).filter((e) => e.seq !== 2);
		expect(verifyTrail(removed, options)).toMatchObject({ intact: false, firstBroken: 2 });

		const [one, two, three] = chain(['a', 'b', 'c']);
		expect(verifyTrail([one!, { ...three!, seq: 2 }, { ...two!, seq: 3 }], options)).toMatchObject({
			intact: false,
			firstBroken: 2
		});
	});

	it('finds the newest entries removed when a checkpoint records more of them', () => {
		const entries = chain(['a', 'b', 'c', 'd']);
		const verification = verifyTrail(entries.slice(0, 2), { keys: [key], anchor: checkpointOf(entries[3]!) });
		expect(verification).toMatchObject({ intact: false, firstBroken: 3 });
		expect(verification.text).toBe(
			'broken after entry 2: entries 3–4 were removed (a checkpoint written at 2027-01-01T10:00:00.000Z outside the database records entry 4)'
		);
	});

	it('finds a rewrite with every later hash recomputed, by its signature', () => {
		const entries = chain(['a', 'b', 'c']);
		expect(verifyTrail(rewrittenFrom(entries, 2), { keys: [key], anchor: noAnchor })).toMatchObject({
			intact: false,
			firstBroken: 2,
			reason: "entry 2 does not carry Tenderloom's signature: it was forged or rewritten outside Tenderloom"
		});
	});

	it('finds a rewrite re-signed with the real key by the checkpoint it no longer matches', () => {
		const entries = chain(['a', 'b', 'c']);
		expect(
			verifyTrail(rewrittenFrom(entries, 2, key), { keys: [key], anchor: checkpointOf(entries[2]!) })
		).toMatchObject({
			intact: false,
			firstBroken: 3,
			reason:
				'entry 3 differs from its checkpoint written at 2027-01-01T10:00:00.000Z: the trail was rewritten at or before entry 3'
		});
	});

	it('finds an appended entry with a correct chain hash but no valid signature', () => {
		const entries = chain(['a', 'b']);
		const forged = signed(
			{ ...entries[1]!, seq: 3, action: 'bids opened', previous_hash: entries[1]!.hash },
			attackerKey
		);
		expect(
			verifyTrail([...entries, { ...forged, mac_key_id: key.id }], { keys: [key], anchor: noAnchor })
		).toMatchObject({ intact: false, firstBroken: 3 });
		expect(
			verifyTrail([...entries, { ...forged, mac: null, mac_key_id: null }], { keys: [key], anchor: noAnchor })
		).toMatchObject({ intact: false, firstBroken: 3 });
	});

	it('verifies entries signed before a key rotation with the earlier key', () => {
		const entries = chain(['a', 'b']);
		const newKey = macKey('the next trail key, also thirty-two characters');
		expect(verifyTrail(entries, { keys: [newKey, key], anchor: noAnchor }).intact).toBe(true);
		expect(verifyTrail(entries, { keys: [newKey], anchor: noAnchor })).toMatchObject({
			intact: false,
			firstBroken: 1,
			reason: `entry 1 is signed with a key this server does not hold (key ${key.id}); add it to TRAIL_MAC_OLD_KEYS`
		});
	});

	it('accepts entries from before signing only at the start of the chain, and says so', () => {
		const legacy = chain(['a', 'b', 'c']).map((e, k) => (k < 2 ? { ...e, mac: null, mac_key_id: null } : e));
		expect(verifyTrail(legacy, { keys: [key], anchor: checkpointOf(legacy[2]!) })).toMatchObject({
			intact: true,
			unsigned: 2,
			text: 'intact, 3 entries, anchored up to entry 3 by a checkpoint outside the database; entries 1–2 predate signed entries'
		});
	});

	it('does not call a trail verified when its latest checkpoint is not valid', () => {
		expect(
			verifyTrail(chain(['a']), {
				keys: [key],
				anchor: { kind: 'invalid', problem: 'the checkpoint 0000000009.json is not valid' }
			})
		).toMatchObject({ intact: false });
	});
});
