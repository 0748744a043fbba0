// Reading a downloaded workbook in tests: a sheet's rows as records keyed by the header row's titles,
// with each cell's note (a spreadsheet comment) beside its value.
import ExcelJS from 'exceljs';

export interface SheetRow {
	values: Record<string, unknown>;
	notes: Record<string, string>;
}

export async function sheetRows(response: Response, sheetName: string): Promise<SheetRow[]> {
	const workbook = new ExcelJS.Workbook();
	await workbook.xlsx.load((await response.arrayBuffer()) as ArrayBuffer);
	const sheet = workbook.getWorksheet(sheetName);
	if (!sheet) throw new Error(`the workbook has no sheet "${sheetName}"`);
	const head = (sheet.getRow(1).values as unknown[]).slice(1).map(String);
	const rows: SheetRow[] = [];
	sheet.eachRow((row, n) => {
		if (n === 1) return;
		const values: Record<string, unknown> = {};
		const notes: Record<string, string> = {};
		head.forEach((title, k) => {
			const cell = row.getCell(k + 1);
			values[title] = cell.value;
			if (cell.note) notes[title] = typeof cell.note === 'string' ? cell.note : JSON.stringify(cell.note);
		});
		rows.push({ values, notes });
	});
	return rows;
}
