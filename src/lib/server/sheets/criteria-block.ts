// The supplier-answered evaluation criteria in a bid sheet: a "Criteria" sheet in the workbook, and in a
// CSV a block after the item rows that starts with its own header row. One row per criterion, the answer
// in the last column; every criterion needs an answer (its money depends on it).
import type ExcelJS from 'exceljs';

export interface SheetCriterion {
	ref: string;
	name: string;
	unit: string;
}

export const CRITERIA_SHEET = 'Criteria';
export const CRITERIA_COLUMNS = ['Criterion ref', 'Criterion', 'Unit', 'Your answer'];
const ANSWER = 'D';

type Cell = string | number | null | { formula: string };

export function criteriaRows(criteria: readonly SheetCriterion[]): (string | number | null)[][] {
	return [CRITERIA_COLUMNS, ...criteria.map((c) => [c.ref, c.name, c.unit, null])];
}

export async function addCriteriaSheet(
	workbook: ExcelJS.Workbook,
	criteria: readonly SheetCriterion[],
	neutralise: (text: string) => string
): Promise<void> {
	const sheet = workbook.addWorksheet(CRITERIA_SHEET);
	sheet.addRow(CRITERIA_COLUMNS).font = { bold: true };
	for (const c of criteria) sheet.addRow([c.ref, neutralise(c.name), neutralise(c.unit), null]);
	sheet.columns.forEach((column, i) => (column.width = i === 1 ? 40 : 16));
	for (let r = 2; r <= criteria.length + 1; r++)
		sheet.getCell(`${ANSWER}${r}`).protection = { locked: false };
	await sheet.protect('', { formatColumns: true });
}

/**
 * Reads the criteria rows (header first, at spreadsheet row `firstRow`) into answers by criterion ref.
 * `number` checks one cell as the price cells are checked (it reports its own problems).
 */
export function readCriteriaRows(
	criteria: readonly SheetCriterion[],
	sheet: string,
	rows: Cell[][],
	firstRow: number,
	number: (row: number, column: string, value: Cell) => number | null,
	problem: (row: number | null, column: string | null, message: string) => void
): Record<string, number> {
	const answers: Record<string, number> = {};
	if (!rows.length) {
		problem(null, null, `the criteria are missing: ${criteria.map((c) => c.ref).join(', ')} need an answer`);
		return answers;
	}
	const header = rows[0]!.map((c) => (c === null ? '' : String(c)));
	const wrong = CRITERIA_COLUMNS.findIndex((name, i) => header[i] !== name);
	if (wrong >= 0) {
		problem(
			firstRow,
			String.fromCharCode(65 + wrong),
			`the header must be "${CRITERIA_COLUMNS[wrong]}" here; the columns must be: ${CRITERIA_COLUMNS.join(', ')}`
		);
		return answers;
	}
	const known = new Map(criteria.map((c) => [c.ref, c]));
	const rowOf = new Map<string, number>();
	rows.slice(1).forEach((cells, index) => {
		const row = firstRow + 1 + index;
		if (cells.every((c) => c === null)) return;
		const ref = cells[0] === null || cells[0] === undefined ? null : String(cells[0]);
		if (!ref) return problem(row, 'A', 'the criterion ref is missing');
		if (!known.has(ref)) return problem(row, 'A', `"${ref}" is not a criterion of this event`);
		if (rowOf.has(ref)) return problem(row, 'A', `"${ref}" appears twice`);
		rowOf.set(ref, row);
		const value = number(row, ANSWER, cells[3] ?? null);
		if (value !== null) answers[ref] = value;
		else if ((cells[3] ?? null) === null)
			problem(row, ANSWER, `the answer to "${known.get(ref)!.name}" is missing`);
	});
	for (const c of criteria)
		if (!rowOf.has(c.ref))
			problem(null, 'A', `the criterion "${c.ref}" (${c.name}) is missing: add its row with an answer`);
	return answers;
}
