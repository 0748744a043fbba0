import { describe, expect, it } from 'vitest';
import { formatMoney } from './format';
import { trailDetailText } from './trail-words';

describe('a trail entry’s detail in words', () => {
	it('names each field in words, shortens hashes and writes a change of state in the badges’ words', () => {
		expect(
			trailDetailText({
				run: 3,
				plan: 'Dual sourcing',
				problemSha256: 'ab'.repeat(32),
				state: { from: 'in_evaluation', to: 'awaiting_signoff' }
			})
		).toBe(
			'run 3 · plan Dual sourcing · problem SHA-256 abababababab… · state In evaluation → Awaiting sign-off'
		);
	});

	it('names a run by its number and leaves its id and the solver’s settings to the stored detail', () => {
		expect(
			trailDetailText(
				{
					run: 'cfbfe0b9-d041-4a7e-9f1b-0c1d2e3f4a5b',
					number: 2,
					status: 'optimal',
					totalCost: 370362.54,
					options: { gap: 0.0001, explain: true, timeLimit: 60 },
					solverVersion: 'HiGHS (npm highs 1.15.3)'
				},
				{ currency: 'EUR' }
			)
		).toBe(`run 2 · status best possible · total cost ${formatMoney(370362.54, 'EUR')}`);
		expect(formatMoney(370362.54, 'EUR')).toBe('370,362.54'); // grouped, two minor units (ISO 4217 EUR)
	});

	it('counts long lists and keeps short ones', () => {
		expect(trailDetailText({ tags: ['a', 'b'], rules: [{}, {}, {}, {}] })).toBe(
			'tags a, b · rules 4 entries'
		);
		expect(trailDetailText(null)).toBe('');
	});
});
