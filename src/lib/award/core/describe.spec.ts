import { describe, expect, it } from 'vitest';
import { describeRule } from './describe';

describe('award rules in plain words', () => {
	it('says what each kind of rule does', () => {
		expect(describeRule({ type: 'max_share', scope: 'each_item', who: 'each_supplier', percent: 60 })).toBe(
			'No supplier gets more than 60% of any item'
		);
		expect(
			describeRule({
				type: 'max_share',
				scope: { lot: 'L1' },
				who: { supplier: 'S2' },
				percent: 40,
				basis: 'spend'
			})
		).toBe('S2 gets no more than 40% of the spend of lot L1');
		expect(
			describeRule({ type: 'min_share', scope: 'event', who: { tag: 'small_business' }, percent: 15 })
		).toBe(
			'Suppliers tagged “small_business” together get at least 15% of the whole event'.replace('gets', 'gets')
		);
		expect(describeRule({ type: 'supplier_count', scope: 'each_item', min: 2 })).toBe(
			'Each item goes to at least 2 suppliers'
		);
		expect(describeRule({ type: 'supplier_count', scope: 'event', max: 3 })).toBe(
			'The whole event goes to at most 3 suppliers'
		);
		expect(
			describeRule({ type: 'min_award', scope: 'each_item', who: 'each_supplier', percentOfItem: 20 })
		).toBe('If a supplier wins part of an item, it gets at least 20% of the item');
		expect(describeRule({ type: 'exclude', scope: { lot: 'L2' }, who: { supplier: 'S4' } })).toBe(
			'S4 gets nothing of lot L2'
		);
		expect(
			describeRule({ type: 'max_spend', scope: 'event', who: { supplier: 'S1' }, amount: 50000 }, 'EUR')
		).toBe('S1 is paid no more than 50000 EUR for the whole event');
		expect(describeRule({ type: 'award_fixed_cost', amount: 250, per: 'supplier' }, 'EUR')).toBe(
			'Each supplier awarded anything adds 250 EUR for its contract'
		);
	});
});
