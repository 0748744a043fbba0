// Changes by hand on a run small enough to price by hand; every figure is worked out beside it.
import { describe, expect, it } from 'vitest';
import type { AwardProblem } from '$lib/award/core/problem';
import type { AwardResult } from '$lib/award/core/engine';
import { applyChanges, changeRules } from './run-adjustments';

const problem = {
	currency: 'EUR',
	items: [
		{ ref: 'IT-1', quantity: 100, unit: 'C62' },
		{ ref: 'IT-2', quantity: 50, unit: 'C62' }
	],
	suppliers: [{ ref: 'A' }, { ref: 'B' }, { ref: 'C' }],
	bids: [
		{ supplier: 'A', item: 'IT-1', unitPrice: 1 },
		{ supplier: 'B', item: 'IT-1', unitPrice: 1.2, maxQuantity: 80 },
		{ supplier: 'C', item: 'IT-1', unitPrice: 1.5 },
		{ supplier: 'A', item: 'IT-2', unitPrice: 2 },
		{ supplier: 'B', item: 'IT-2', unitPrice: 1.9, priceBreaks: [{ fromQuantity: 50, unitPrice: 1.8 }] }
	],
	bundles: [],
	rules: [
		{
			type: 'min_share',
			label: 'Incumbent floor',
			scope: { item: 'IT-1' },
			who: { supplier: 'A' },
			percent: 50
		}
	]
} as AwardProblem;

// The run: IT-1 all to A (100 x 1.00 = 100), IT-2 all to B at its break (50 x 1.80 = 90); 190 in all.
const result = {
	status: 'optimal',
	totalCost: 190,
	awards: [
		{ supplier: 'A', item: 'IT-1', quantity: 100, unitPrice: 1, cost: 100 },
		{ supplier: 'B', item: 'IT-2', quantity: 50, unitPrice: 1.8, cost: 90 }
	],
	uncoveredItems: []
} as unknown as AwardResult;
const run = { problem, result };

describe('changing an allocation by hand', () => {
	it('prices each change, the new total and the rules it breaks', () => {
		const preview = applyChanges(run, [
			// IT-1: A keeps 40 (40.00), B gets 60 at 1.20 (72.00): 112, up 12.
			{ kind: 'move', item: 'IT-1', supplier: 'A', to: 'B', quantity: 60 },
			// IT-2: B's 50 go to the only other bid, A at 2.00: 100, up 10.
			{ kind: 'exclude', item: 'IT-2', supplier: 'B' }
		]);
		expect(preview.runTotal).toBe(190);
		expect(preview.total).toBeCloseTo(212, 9);
		expect(preview.changes.map((c) => c.costChange)).toEqual([expect.closeTo(12, 9), expect.closeTo(10, 9)]);
		expect(preview.changes.every((c) => c.needsJustification)).toBe(true);
		// A has 40 of IT-1's 100 where the floor asks for 50: 10 under.
		expect(preview.broken).toEqual(['Incumbent floor: A has 40 of 100 in IT-1, under its 50% (50) by 10']);
		expect(preview.items[0]).toEqual({
			item: 'IT-1',
			unit: 'C62',
			before: [{ supplier: 'A', quantity: 100, cost: 100 }],
			after: [
				{ supplier: 'A', quantity: 40, cost: 40 },
				{ supplier: 'B', quantity: 60, cost: expect.closeTo(72, 9) }
			]
		});
	});

	it('needs no justification for a change that saves money', () => {
		// B has all of IT-2 already: locking it to B changes nothing (0.00).
		const preview = applyChanges(run, [{ kind: 'lock', item: 'IT-2', supplier: 'B' }]);
		expect(preview.changes[0]!.costChange).toBe(0);
		expect(preview.changes[0]!.needsJustification).toBe(false);
	});

	it('becomes fixed quantities and exclusions for the solve of the rest', () => {
		const preview = applyChanges(run, [
			{ kind: 'move', item: 'IT-1', supplier: 'A', to: 'B', quantity: 60 },
			{ kind: 'exclude', item: 'IT-2', supplier: 'B' }
		]);
		expect(changeRules(preview, (k) => `Manual change ${k + 1}`)).toEqual([
			{
				type: 'fixed_quantity',
				label: 'Manual change 1: IT-1: 60 C62 from A to B',
				scope: { item: 'IT-1' },
				who: { supplier: 'A' },
				quantity: 40
			},
			{
				type: 'fixed_quantity',
				label: 'Manual change 1: IT-1: 60 C62 from A to B',
				scope: { item: 'IT-1' },
				who: { supplier: 'B' },
				quantity: 60
			},
			{
				type: 'exclude',
				label: 'Manual change 2: IT-2: nothing to B',
				scope: { item: 'IT-2' },
				who: { supplier: 'B' }
			}
		]);
	});

	it('asks a justification of every change when together they cost more, fixed costs included', () => {
		// One supplier per contract costs 50.00. The run: both items to A (100 x 1.00 + 50 x 2.00 = 200.00)
		// plus one contract, 250.00. D bids 0.99 for IT-1: locking IT-1 to D saves 1.00 on the item but adds
		// a contract: 299.00, 49.00 more, though the change's own figure is -1.00.
		const withFixed = {
			problem: {
				...problem,
				suppliers: [...problem.suppliers, { ref: 'D' }],
				bids: [...problem.bids, { supplier: 'D', item: 'IT-1', unitPrice: 0.99 }],
				rules: [{ type: 'award_fixed_cost', amount: 50, per: 'supplier' }]
			} as AwardProblem,
			result: {
				...result,
				totalCost: 250,
				awards: [
					{ supplier: 'A', item: 'IT-1', quantity: 100, unitPrice: 1, cost: 100 },
					{ supplier: 'A', item: 'IT-2', quantity: 50, unitPrice: 2, cost: 100 }
				]
			} as AwardResult
		};
		const preview = applyChanges(withFixed, [{ kind: 'lock', item: 'IT-1', supplier: 'D' }]);
		expect(preview.total).toBeCloseTo(299, 9);
		expect(preview.changes[0]!.costChange).toBeCloseTo(-1, 9);
		expect(preview.changes[0]!.needsJustification).toBe(true);
	});

	it('refuses a change the bids do not allow, naming the change and why', () => {
		const refused = (changes: Parameters<typeof applyChanges>[1]) => {
			try {
				applyChanges(run, changes);
			} catch (error) {
				return (error as Error).message;
			}
			return 'accepted';
		};
		expect(refused([{ kind: 'move', item: 'IT-1', supplier: 'A', to: 'B', quantity: 200 }])).toBe(
			'Change 1: A has 100 of IT-1 in this allocation; it cannot give 200.'
		);
		expect(refused([{ kind: 'move', item: 'IT-1', supplier: 'A', to: 'B', quantity: 90 }])).toBe(
			'Change 1: B bid for at most 80 of IT-1; this change would give it 90.'
		);
		expect(refused([{ kind: 'lock', item: 'IT-2', supplier: 'C' }])).toBe(
			'Change 1: C did not bid for IT-2.'
		);
		// IT-1 is counted in units (C62): half a unit cannot move.
		expect(refused([{ kind: 'move', item: 'IT-1', supplier: 'A', to: 'B', quantity: 20.5 }])).toBe(
			'Change 1: B would get 20.5 of IT-1, which goes in whole units.'
		);
		expect(refused([{ kind: 'lock', item: 'IT-9', supplier: 'A' }])).toBe(
			'Change 1: "IT-9" is not an item of this event.'
		);
		// IT-2 has two bids: with B excluded its 50 go to A; excluding A as well leaves nobody (B stays out).
		expect(
			refused([
				{ kind: 'exclude', item: 'IT-2', supplier: 'B' },
				{ kind: 'lock', item: 'IT-2', supplier: 'B' }
			])
		).toBe('Change 2: change 1 excluded B from IT-2.');
		expect(
			refused([
				{ kind: 'exclude', item: 'IT-2', supplier: 'B' },
				{ kind: 'exclude', item: 'IT-2', supplier: 'A' }
			])
		).toBe('Change 2: no other bid for IT-2 can take the 50 C62 A has.');
	});
});
