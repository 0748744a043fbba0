import { describe, expect, it } from 'vitest';
import type { AwardRule } from '$lib/award/core/problem';
import { ruleForReading, rulesBySupplierId, rulesBySupplierName, suppliersNamed } from './plan-suppliers';

const north = { id: '0b6f6c1e-8a52-4d5e-9a57-1f3c5e2d7a01', name: 'Northwind Pallets' };
const harbour = { id: '5d2e9f40-3c1b-4e8a-b6d2-7a9c0e1f2b34', name: 'Harbour Crates' };
const names = new Map([north, harbour].map((s) => [s.id, s.name]));

const rules: AwardRule[] = [
	{ type: 'max_share', scope: 'each_item', who: 'each_supplier', percent: 60 },
	{ type: 'exclude', scope: { item: 'IT-1' }, who: { supplier: north.id } },
	{ type: 'min_share', scope: 'event', who: { tag: 'small_business' }, percent: 15 },
	{ type: 'max_spend', scope: 'event', who: { supplier: harbour.id }, amount: 500, label: 'Cap' }
];

describe('rulesBySupplierName', () => {
	it('names each supplier the rules give by organisation id, and leaves every other rule as it is', () => {
		const named = rulesBySupplierName(rules, names);
		expect(named).toEqual({
			ok: true,
			rules: [
				rules[0],
				{ type: 'exclude', scope: { item: 'IT-1' }, who: { supplier: 'Northwind Pallets' } },
				rules[2],
				{ type: 'max_spend', scope: 'event', who: { supplier: 'Harbour Crates' }, amount: 500, label: 'Cap' }
			]
		});
		expect(rules[1]).toEqual({ type: 'exclude', scope: { item: 'IT-1' }, who: { supplier: north.id } });
	});

	it('refuses an id that names no invited supplier, by the rule’s number from 1', () => {
		const named = rulesBySupplierName(rules, new Map([[harbour.id, harbour.name]]));
		expect(named).toEqual({
			ok: false,
			problems: [`Rule 2 (who.supplier): the supplier “${north.id}” is not invited to this event`]
		});
	});
});

describe('rulesBySupplierId', () => {
	it('stores a supplier given by its exact name or by its id as its id', () => {
		const given: AwardRule[] = [
			{ type: 'exclude', scope: 'event', who: { supplier: 'Northwind Pallets' } },
			{ type: 'exclude', scope: 'event', who: { supplier: harbour.id } }
		];
		expect(rulesBySupplierId(given, [north, harbour])).toEqual({
			ok: true,
			rules: [
				{ type: 'exclude', scope: 'event', who: { supplier: north.id } },
				{ type: 'exclude', scope: 'event', who: { supplier: harbour.id } }
			]
		});
	});

	it('refuses a supplier that is not invited, by the rule’s number and field', () => {
		const given: AwardRule[] = [
			{ type: 'exclude', scope: 'event', who: { supplier: north.id } },
			{ type: 'exclude', scope: 'event', who: { supplier: 'Nobody Trading' } }
		];
		expect(rulesBySupplierId(given, [north])).toEqual({
			ok: false,
			problems: ['Rule 2 (who.supplier): “Nobody Trading” is not invited to this event']
		});
	});
});

describe('reading a plan', () => {
	it('describes a rule by the supplier’s name and keeps an unknown id as stored', () => {
		expect(ruleForReading(rules[1]!, names)).toEqual({
			type: 'exclude',
			scope: { item: 'IT-1' },
			who: { supplier: 'Northwind Pallets' }
		});
		expect(ruleForReading(rules[1]!, new Map())).toBe(rules[1]);
		expect(suppliersNamed([...rules, rules[1]!], new Map([[north.id, north.name]]))).toEqual([
			{ id: north.id, name: 'Northwind Pallets' },
			{ id: harbour.id, name: null }
		]);
	});
});
