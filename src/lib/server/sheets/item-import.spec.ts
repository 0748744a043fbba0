import { describe, expect, it } from 'vitest';
import { parseItemCsv } from './item-import';

describe('an item list in whole units', () => {
	it('refuses part of a counted unit, naming the row and column, and keeps parts of a measured one', () => {
		const outcome = parseItemCsv(
			[
				'Ref,Description,Lot,Quantity,Unit',
				'IT-1,Cases,,10.5,C62',
				'IT-2,Film,,10.5,KGM',
				'IT-3,Gloves,,12,pr'
			].join('\n')
		);
		expect(outcome).toEqual({
			ok: false,
			problems: [
				{
					sheet: 'CSV',
					row: 2,
					column: 'D',
					message: '10.5 is not a whole number, and C62 is counted in whole units'
				}
			]
		});
		const fixed = parseItemCsv(['Ref,Quantity,Unit', 'IT-1,10,C62', 'IT-2,10.5,KGM'].join('\n'));
		expect(fixed.ok && fixed.items.map((i) => [i.ref, i.quantity, i.unit])).toEqual([
			['IT-1', 10, 'C62'],
			['IT-2', 10.5, 'KGM']
		]);
	});

	it('refuses a quantity or order multiple the database cannot hold', () => {
		const outcome = parseItemCsv(['Ref,Quantity,Unit,Order multiple', 'IT-1,1e15,C62,1e14'].join('\n'));
		expect(outcome.ok ? [] : outcome.problems.map((p) => `${p.row}${p.column} ${p.message}`)).toEqual([
			'2B must be less than 100,000,000,000,000',
			'2D must be less than 100,000,000,000,000'
		]);
	});
});
