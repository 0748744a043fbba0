// Line items of an event from a spreadsheet (.xlsx) or CSV, or from the on-screen table: header names
// in any order, every bad cell reported by sheet, row and column, nothing saved unless all rows are good.
import ExcelJS from 'exceljs';
import { parse as parseCsv } from 'csv-parse/sync';
import { UNIT_CODE } from '$lib/schemas/events';
import { countedWhole } from '$lib/award/core/units';
import type { ItemFields } from '../shapes';
import { LARGEST, letter, TOO_LARGE, type SheetProblem } from './bid-sheet';

export const ITEM_COLUMNS = [
	{ key: 'ref', header: 'Ref', required: true },
	{ key: 'description', header: 'Description', required: false },
	{ key: 'lot', header: 'Lot', required: false },
	{ key: 'quantity', header: 'Quantity', required: true },
	{ key: 'unit', header: 'Unit', required: true },
	{ key: 'baselineUnitPrice', header: 'Baseline unit price', required: false },
	{ key: 'freightPerUnit', header: 'Freight per unit', required: false },
	{ key: 'dutyPerUnit', header: 'Duty per unit', required: false },
	{ key: 'orderMultiple', header: 'Order multiple', required: false }
] as const;

export type ItemColumn = (typeof ITEM_COLUMNS)[number]['key'];
export type RawItemRow = Partial<Record<ItemColumn, string>>;
export const MAX_ITEMS = 20_000;

/** What reading an item list gives: the items, or every problem by sheet, row and column. */
export type ItemFileOutcome = { ok: true; items: ItemFields[] } | { ok: false; problems: SheetProblem[] };

const NUMBER = /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/;

/**
 * Checks rows (row numbers as the user sees them) and returns the items or every problem. `columnOf`
 * names the column of a field the way the source shows it (a letter on a sheet, a header on screen).
 */
export function validateItemRows(
	sheet: string,
	rows: { row: number; cells: RawItemRow }[],
	columnOf: (key: ItemColumn) => string
): { ok: true; items: ItemFields[] } | { ok: false; problems: SheetProblem[] } {
	const problems: SheetProblem[] = [];
	const add = (row: number, key: ItemColumn, message: string) =>
		problems.push({ sheet, row, column: columnOf(key), message });
	const seen = new Map<string, number>();
	const items: ItemFields[] = [];
	if (rows.length > MAX_ITEMS)
		return {
			ok: false,
			problems: [{ sheet, row: null, column: null, message: `at most ${MAX_ITEMS} items per event` }]
		};
	for (const { row, cells } of rows) {
		const text = (key: ItemColumn) => (cells[key] ?? '').trim();
		const number = (key: ItemColumn, required: boolean, positive: boolean): number | null => {
			const value = text(key).replace(/\s/g, '');
			if (!value) {
				if (required) add(row, key, 'is missing');
				return null;
			}
			if (!NUMBER.test(value)) {
				add(row, key, `"${value.slice(0, 40)}" is not a number`);
				return null;
			}
			const n = Number(value);
			if (n < 0 || (positive && n === 0)) {
				add(row, key, positive ? 'must be more than 0' : 'must not be negative');
				return null;
			}
			if (n >= LARGEST) {
				add(row, key, TOO_LARGE);
				return null;
			}
			return n;
		};
		const ref = text('ref');
		if (!ref) add(row, 'ref', 'the item ref is missing');
		else if (ref.length > 40 || /^[=+\-@]/.test(ref))
			add(row, 'ref', 'at most 40 characters, not starting with = + - @');
		else if (seen.has(ref)) add(row, 'ref', `"${ref}" is already used in row ${seen.get(ref)}`);
		else seen.set(ref, row);
		const unit = text('unit').toUpperCase();
		if (!unit) add(row, 'unit', 'is missing');
		else if (!UNIT_CODE.test(unit))
			add(
				row,
				'unit',
				`"${unit.slice(0, 10)}" is not a UN/CEFACT Recommendation 20 code (such as C62, KGM, MTR)`
			);
		const lot = text('lot');
		if (lot.length > 40) add(row, 'lot', 'at most 40 characters');
		const description = text('description');
		if (description.length > 1000) add(row, 'description', 'at most 1000 characters');
		const quantity = number('quantity', true, true);
		// The award engine gives a counted item (C62, PR, a package type …) whole units only.
		if (quantity !== null && unit && countedWhole({ unit }) && !Number.isInteger(quantity))
			add(row, 'quantity', `${quantity} is not a whole number, and ${unit} is counted in whole units`);
		const baseline = number('baselineUnitPrice', false, false);
		const freight = number('freightPerUnit', false, false);
		const duty = number('dutyPerUnit', false, false);
		const orderMultiple = number('orderMultiple', false, true);
		if (orderMultiple !== null && unit && countedWhole({ unit }) && !Number.isInteger(orderMultiple))
			add(
				row,
				'orderMultiple',
				`${orderMultiple} is not a whole number, and ${unit} is counted in whole units`
			);
		if (quantity !== null && ref && unit)
			items.push({
				ref,
				description,
				lot: lot || null,
				quantity,
				unit,
				baselineUnitPrice: baseline,
				freightPerUnit: freight,
				dutyPerUnit: duty,
				orderMultiple
			});
	}
	if (!problems.length && !rows.length)
		problems.push({ sheet, row: null, column: null, message: 'there are no items' });
	return problems.length ? { ok: false, problems } : { ok: true, items };
}

function fromGrid(sheet: string, grid: string[][]) {
	const header = (grid[0] ?? []).map((h) => h.trim().toLowerCase());
	const positions = new Map<ItemColumn, number>();
	const problems: SheetProblem[] = [];
	for (const column of ITEM_COLUMNS) {
		const at = header.indexOf(column.header.toLowerCase());
		if (at >= 0) positions.set(column.key, at);
		else if (column.required)
			problems.push({
				sheet,
				row: 1,
				column: null,
				message: `no column headed "${column.header}"; the headers are: ${ITEM_COLUMNS.map((c) => c.header).join(', ')}`
			});
	}
	if (problems.length) return { ok: false as const, problems };
	const rows = grid
		.slice(1)
		.map((cells, k) => ({
			row: k + 2,
			cells: Object.fromEntries([...positions].map(([key, at]) => [key, cells[at] ?? ''])) as RawItemRow
		}))
		.filter((r) => Object.values(r.cells).some((v) => v.trim() !== ''));
	return validateItemRows(sheet, rows, (key) => letter(positions.get(key) ?? 0));
}

export async function parseItemWorkbook(bytes: Buffer): Promise<ItemFileOutcome> {
	const workbook = new ExcelJS.Workbook();
	try {
		await workbook.xlsx.load(bytes as unknown as ArrayBuffer);
	} catch {
		return {
			ok: false as const,
			problems: [
				{
					sheet: '(workbook)',
					row: null,
					column: null,
					message: 'the workbook cannot be read; save it as .xlsx'
				}
			]
		};
	}
	const sheet = workbook.getWorksheet('Items') ?? workbook.worksheets[0];
	if (!sheet)
		return {
			ok: false as const,
			problems: [{ sheet: '(workbook)', row: null, column: null, message: 'the workbook has no sheet' }]
		};
	const grid: string[][] = [];
	let formula = false;
	for (let r = 1; r <= sheet.rowCount; r++) {
		const row = sheet.getRow(r);
		const cells: string[] = [];
		for (let c = 1; c <= Math.max(row.cellCount, ITEM_COLUMNS.length); c++) {
			const value = row.getCell(c).value;
			if (value && typeof value === 'object' && ('formula' in value || 'sharedFormula' in value)) {
				formula = true;
				cells.push('');
			} else if (value && typeof value === 'object' && 'richText' in value)
				cells.push(value.richText.map((t) => t.text).join(''));
			else cells.push(value === null || value === undefined ? '' : String(value));
		}
		grid.push(cells);
	}
	if (formula)
		return {
			ok: false as const,
			problems: [
				{ sheet: sheet.name, row: null, column: null, message: 'formulas are not accepted; paste the values' }
			]
		};
	return fromGrid(sheet.name, grid);
}

export function parseItemCsv(text: string): ItemFileOutcome {
	let grid: string[][];
	try {
		grid = parseCsv(text, { relax_column_count: true, skip_empty_lines: true, bom: true }) as string[][];
	} catch (error) {
		return {
			ok: false as const,
			problems: [
				{ sheet: 'CSV', row: null, column: null, message: `not valid CSV: ${(error as Error).message}` }
			]
		};
	}
	return fromGrid('CSV', grid);
}
