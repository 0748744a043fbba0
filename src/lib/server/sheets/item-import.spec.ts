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
});
