import { describe, expect, it } from 'vitest';
import { filterRows, sortRows, type Column } from './table';

interface Row {
	ref: string;
	title: string;
	items: number | null;
}
const rows: Row[] = [
	{ ref: 'EV-10', title: 'Pallets', items: 24 },
	{ ref: 'EV-9', title: 'Gants de sécurité', items: null },
	{ ref: 'EV-2', title: 'Packaging', items: 300 },
	{ ref: 'EV-11', title: 'pallets, returnable', items: 24 }
];
const columns: Column<Row>[] = [
	{ key: 'ref', label: 'Reference', text: (r) => r.ref },
	{ key: 'title', label: 'Title', text: (r) => r.title },
	{ key: 'items', label: 'Items', numeric: true }
];

describe('sortRows', () => {
	it('sorts references with numbers in them as people count (EV-2 before EV-10), both ways', () => {
		expect(sortRows(rows, (r) => r.ref, 'asc').map((r) => r.ref)).toEqual(['EV-2', 'EV-9', 'EV-10', 'EV-11']);
		expect(sortRows(rows, (r) => r.ref, 'desc').map((r) => r.ref)).toEqual([
			'EV-11',
			'EV-10',
			'EV-9',
			'EV-2'
		]);
	});

	it('sorts figures by value, keeps ties in their order, and puts rows without a figure last either way', () => {
		expect(sortRows(rows, (r) => r.items, 'asc').map((r) => r.ref)).toEqual([
			'EV-10',
			'EV-11',
			'EV-2',
			'EV-9'
		]);
		expect(sortRows(rows, (r) => r.items, 'desc').map((r) => r.ref)).toEqual([
			'EV-2',
			'EV-10',
			'EV-11',
			'EV-9'
		]);
	});

	it('leaves the rows it was given as they were', () => {
		const before = rows.map((r) => r.ref);
		sortRows(rows, (r) => r.title, 'asc');
		expect(rows.map((r) => r.ref)).toEqual(before);
	});
});

describe('filterRows', () => {
	it('keeps rows holding every word, ignoring case and accents, in the searched columns only', () => {
		expect(filterRows(rows, columns, 'PALLETS').map((r) => r.ref)).toEqual(['EV-10', 'EV-11']);
		expect(filterRows(rows, columns, 'pallets returnable').map((r) => r.ref)).toEqual(['EV-11']);
		expect(filterRows(rows, columns, 'securite').map((r) => r.ref)).toEqual(['EV-9']);
		expect(filterRows(rows, columns, '300')).toEqual([]); // the items column is not searched
	});

	it('keeps every row for an empty or blank query', () => {
		expect(filterRows(rows, columns, '   ')).toHaveLength(4);
	});
});
