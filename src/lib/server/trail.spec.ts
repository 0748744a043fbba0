import { describe, expect, it } from 'vitest';
import { canonicalJson, sha256, verifyTrail, type TrailEntry } from './trail';

// The chain rule of the trail: hash(n) = SHA-256(hash(n-1) + "\n" + canonical JSON of entry n).
function chain(actions: string[]): TrailEntry[] {
	const entries: TrailEntry[] = [];
	let previous: string | null = null;
	for (const [k, action] of actions.entries()) {
		const body = {
			event_id: 'e1',
			seq: k + 1,
			at: new Date(Date.UTC(2027, 0, 1, 9, k)),
			actor_user_id: 7,
			actor: 'Test buyer <b@example.test>',
			action,
			detail: { n: k, nested: { b: 2, a: 1 } }
		};
		const hash = sha256(`${previous ?? ''}\n${canonicalJson({ ...body, at: body.at.toISOString() })}`);
		entries.push({ ...body, previous_hash: previous, hash });
		previous = hash;
	}
	return entries;
}

describe('the decision trail chain', () => {
	it('writes objects with sorted keys at every level, so equal values hash equally', () => {
		expect(canonicalJson({ b: 1, a: { d: [3, { f: 1, e: 2 }], c: null } })).toBe(
			'{"a":{"c":null,"d":[3,{"e":2,"f":1}]},"b":1}'
		);
		// SHA-256 of the empty string (FIPS 180-4 test vector, as published in its examples).
		expect(sha256('')).toBe('e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855');
	});

	it('finds an intact chain intact', () => {
		expect(verifyTrail(chain(['event created', 'event published', 'bids opened']))).toEqual({
			intact: true,
			entries: 3,
			text: 'intact, 3 entries'
		});
	});

	it('finds a changed, a removed and a reordered entry, naming the first broken one', () => {
		const changed = chain(['a', 'b', 'c']);
		changed[1] = { ...changed[1]!, detail: { n: 99 } };
		expect(verifyTrail(changed)).toMatchObject({
			intact: false,
			firstBroken: 2,
			reason: 'entry 2 was changed after it was written'
		});

		const removed = chain(['a', 'b', 'c']).filter((e) => e.seq !== 2);
		expect(verifyTrail(removed)).toMatchObject({ intact: false, firstBroken: 2 });

		const [one, two, three] = chain(['a', 'b', 'c']);
		expect(verifyTrail([one!, { ...three!, seq: 2 }, { ...two!, seq: 3 }])).toMatchObject({
			intact: false,
			firstBroken: 2
		});
	});
});
