// The bound that keeps each supplier whole, on cases small enough to count by hand. Its validity against
// an independent solver on seeded cases is in core/cross-check.spec.ts.
import { describe, expect, it } from 'vitest';
import { buildModel } from '../model';
import type { AwardProblem, AwardRule } from '../problem';
import { evaluate, supplierBound, supplierRelaxation } from './supplier-bound';

function anEvent(
	items: { ref: string; quantity: number }[],
	suppliers: { ref: string; capacity?: number }[],
	bids: [supplier: string, item: string, unitPrice: number][],
	rules: AwardRule[]
): AwardProblem {
	return {
		currency: 'EUR',
		items,
		suppliers,
		bids: bids.map(([supplier, item, unitPrice]) => ({ supplier, item, unitPrice })),
		bundles: [],
		rules
	} as AwardProblem;
}

// Two items of 10 units; S1 is cheap on A, S2 on B, S3 middling on both; one supplier over the event.
// The optimum is S3 alone, 10·2 + 10·2 = 40 (S1 or S2 alone cost 10·1 + 10·5 = 60).
const oneSupplier = anEvent(
	[
		{ ref: 'A', quantity: 10 },
		{ ref: 'B', quantity: 10 }
	],
	[{ ref: 'S1' }, { ref: 'S2' }, { ref: 'S3' }],
	[
		['S1', 'A', 1],
		['S1', 'B', 5],
		['S2', 'A', 5],
		['S2', 'B', 1],
		['S3', 'A', 2],
		['S3', 'B', 2]
	],
	[{ type: 'supplier_count', scope: 'event', max: 1 }]
);

describe('the bound that keeps each supplier whole', () => {
	it('prices the cover rows and opens at most the count of suppliers, as counted by hand', () => {
		// At u = (3, 3), per unit: S1 A 1−3 = −2, B 5−3 = +2; S2 A +2, B −2; S3 A −1, B −1. Each supplier
		// takes every negative item whole (no capacity): V = −20 for each of the three. One may open:
		// L = 3·10 + 3·10 − 20 = 40, the optimum. Without the count all three open: 60 − 60 = 0.
		const relaxation = supplierRelaxation(oneSupplier, buildModel(oneSupplier))!;
		const atThree = evaluate(relaxation, { cover: Float64Array.of(3, 3), rows: new Float64Array(0) })!;
		expect(atThree.bound).toBeCloseTo(40, 9);
		expect(atThree.opened).toHaveLength(1);
		// At u = (5, 5): S1 −4·10 = −40, S2 −40, S3 −3·10 − 3·10 = −60; S3 opens: 100 − 60 = 40.
		const atFive = evaluate(relaxation, { cover: Float64Array.of(5, 5), rows: new Float64Array(0) })!;
		expect(atFive.bound).toBeCloseTo(40, 9);
		expect(atFive.opened).toEqual([2]);
	});

	it('reaches the optimum of the hand case from prices of zero by subgradient steps', async () => {
		const found = await supplierBound(oneSupplier, buildModel(oneSupplier), null, 60, { seconds: 5 });
		expect(found!.bound).toBeLessThanOrEqual(40 + 1e-9);
		expect(found!.bound).toBeGreaterThan(39.9);
	});

	it('opens suppliers whose capacities cover the demand, even where each costs more than it saves', () => {
		// One item of 10 units; S1 and S2 hold 6 each at 1, S3 10 at 3; a fixed cost of 5 per supplier
		// awarded. Optimum: S1 and S2, 10·1 + 2·5 = 20. At u = 1.5: S1 and S2 save 0.5 on 6 units,
		// V = 5 − 3 = 2 each; S3 saves nothing, V = 5. None is below 0, but the chosen suppliers must hold
		// 10 units: S1 and S2 (V 4) or S3 (V 5). L = 1.5·10 + 4 = 19 (without that cover it would be 15).
		const fixed = anEvent(
			[{ ref: 'A', quantity: 10 }],
			[
				{ ref: 'S1', capacity: 6 },
				{ ref: 'S2', capacity: 6 },
				{ ref: 'S3', capacity: 10 }
			],
			[
				['S1', 'A', 1],
				['S2', 'A', 1],
				['S3', 'A', 3]
			],
			[{ type: 'award_fixed_cost', amount: 5, per: 'supplier' }]
		);
		const relaxation = supplierRelaxation(fixed, buildModel(fixed))!;
		const at = evaluate(relaxation, { cover: Float64Array.of(1.5), rows: new Float64Array(0) })!;
		expect(at.bound).toBeCloseTo(19, 9);
		expect([...at.opened].sort()).toEqual([0, 1]);
	});

	it('gives no bound for a problem with bundles', () => {
		const withBundle = {
			...oneSupplier,
			bundles: [{ ref: 'K1', supplier: 'S1', price: 30, items: [{ item: 'A', quantity: 10 }] }]
		} as AwardProblem;
		expect(supplierRelaxation(withBundle, buildModel(withBundle))).toBeNull();
	});
});
