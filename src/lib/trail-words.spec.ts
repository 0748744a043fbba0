import { describe, expect, it } from 'vitest';
import { trailDetailText } from './trail-words';

describe('a trail entry’s detail in words', () => {
	it('names each field in words, shortens hashes and writes a change of state with an arrow', () => {
		expect(
			trailDetailText({
				run: 3,
				plan: 'Dual sourcing',
				problemSha256: 'ab'.repeat(32),
				state: { from: 'in_evaluation', to: 'awaiting_signoff' }
			})
		).toBe(
			'run 3 · plan Dual sourcing · problem SHA-256 abababababab… · state in evaluation → awaiting signoff'
		);
	});

	it('counts long lists and keeps short ones', () => {
		expect(trailDetailText({ tags: ['a', 'b'], rules: [{}, {}, {}, {}] })).toBe(
			'tags a, b · rules 4 entries'
		);
		expect(trailDetailText(null)).toBe('');
	});
});
