import ExcelJS from 'exceljs';
import { describe, expect, it } from 'vitest';
import { runWorkbook, type ExportedRun } from './run-export';

const run = (
	id: string,
	number: number,
	awards: { supplier: string; item: string; quantity: number; cost: number }[]
) =>
	({
		id,
		number,
		plan: `Plan ${number}`,
		status: 'done',
		currency: 'EUR',
		problemSha256: 'a'.repeat(64),
		resultSha256: 'b'.repeat(64),
		solverVersion: 'HiGHS',
		rules: [{ index: 0, text: 'No supplier gets more than 60% of any item' }],
		result: {
			status: 'optimal',
			method: 'mip',
			totalCost: awards.reduce((a, l) => a + l.cost, 0),
			baselineCost: null,
			savings: null,
			gap: 0,
			awards: awards.map((l) => ({ ...l, unitPrice: l.cost / l.quantity })),
			supplierTotals: [],
			ruleCosts: [
				{ rule: 0, label: 'r', cost: 12, costOnTopOfEarlier: 12, runningTotal: 12, tolerance: 1e-6 }
			]
		}
	}) as unknown as ExportedRun;

describe('a run as a workbook', () => {
	it('writes names that look like formulas as text (formula injection, OWASP)', async () => {
		const bytes = await runWorkbook(
			'EV-1',
			run('r1', 1, [{ supplier: '=HYPERLINK("x")', item: '@SUM(A1)', quantity: 1, cost: 2 }])
		);
		const workbook = new ExcelJS.Workbook();
		await workbook.xlsx.load(bytes as unknown as ArrayBuffer);
		const row = workbook.getWorksheet('Allocation')!.getRow(2);
		expect(row.getCell(1).value).toBe("'@SUM(A1)");
		expect(row.getCell(2).value).toBe(`'=HYPERLINK("x")`);
		expect(workbook.getWorksheet('Rule costs')!.getRow(2).getCell(2).value).toBe(12);
	});

	// ECMA-376 number formats: "#,##0.00" groups thousands with two decimals (EUR's minor unit, ISO 4217).
	it('gives amounts the currency’s decimals and thousands, freezes and filters each table’s header', async () => {
		const bytes = await runWorkbook(
			'EV-1',
			run('r1', 1, [{ supplier: 'A', item: 'IT-1', quantity: 1_910, cost: 2_297.73 }])
		);
		const workbook = new ExcelJS.Workbook();
		await workbook.xlsx.load(bytes as unknown as ArrayBuffer);
		const allocation = workbook.getWorksheet('Allocation')!;
		expect(allocation.views[0]).toMatchObject({ state: 'frozen', ySplit: 1 });
		expect(allocation.autoFilter).toBeTruthy();
		const line = allocation.getRow(2);
		expect(line.getCell(3).numFmt).toBe('#,##0');
		expect(line.getCell(4).numFmt).toBe('#,##0.00####');
		expect(line.getCell(5).numFmt).toBe('#,##0.00');
		expect(line.getCell(5).value).toBe(2_297.73);
		const summary = workbook.getWorksheet('Summary')!;
		expect(summary.getRow(7).getCell(1).value).toBe('Total cost (EUR)');
		expect(summary.getRow(7).getCell(2).numFmt).toBe('#,##0.00');
		expect(workbook.getWorksheet('Rule costs')!.getRow(2).getCell(2).numFmt).toBe('#,##0.00');
	});
});
