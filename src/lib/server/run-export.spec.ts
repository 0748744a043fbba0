import ExcelJS from 'exceljs';
import { describe, expect, it } from 'vitest';
import { compareRuns, runWorkbook, type ExportedRun } from './run-export';

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

describe('runs side by side and as a workbook', () => {
	it('counts suppliers and split items and lists only the items allocated differently', () => {
		const one = run('r1', 1, [
			{ supplier: 'S1', item: 'IT-1', quantity: 60, cost: 240 },
			{ supplier: 'S2', item: 'IT-1', quantity: 40, cost: 200 },
			{ supplier: 'S1', item: 'IT-2', quantity: 10, cost: 30 }
		]);
		const two = run('r2', 2, [
			{ supplier: 'S1', item: 'IT-1', quantity: 100, cost: 400 },
			{ supplier: 'S1', item: 'IT-2', quantity: 10, cost: 30 }
		]);
		const comparison = compareRuns([one, two]);
		expect(comparison.runs.map((r) => [r.number, r.totalCost, r.suppliers, r.splitItems])).toEqual([
			[1, 470, 2, 1],
			[2, 430, 1, 0]
		]);
		expect(comparison.differing).toEqual([{ item: 'IT-1', allocations: ['S1 60 / S2 40', 'S1 100'] }]);
	});

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
});
