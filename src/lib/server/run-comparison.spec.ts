import ExcelJS from 'exceljs';
import { describe, expect, it } from 'vitest';
import type { AwardResult } from '$lib/award/core/engine';
import { compareRuns, type ComparedItem, type ComparedRunInput } from './run-comparison';
import { comparisonWorkbook } from './sheets/compare-sheet';

type Line = [supplier: string, item: string, quantity: number, unitPrice: number];

function run(
	number: number,
	lines: Line[],
	totals: { total: number; baseline: number | null },
	extra: Partial<ComparedRunInput> = {}
): ComparedRunInput {
	const awards = lines.map(([supplier, item, quantity, unitPrice]) => ({
		supplier,
		item,
		quantity,
		unitPrice,
		cost: quantity * unitPrice
	}));
	return {
		id: `run-${number}`,
		number,
		plan: `Plan ${number}`,
		status: 'done',
		adjustedFrom: null,
		manualChanges: 0,
		...extra,
		result: {
			status: 'optimal',
			currency: 'EUR',
			totalCost: totals.total,
			baselineCost: totals.baseline,
			savings: totals.baseline === null ? null : totals.baseline - totals.total,
			awards,
			uncoveredItems: []
		} as unknown as AwardResult
	};
}

const items: ComparedItem[] = [
	{ ref: 'IT-1', lot: 'L1', unit: 'C62' },
	{ ref: 'IT-2', lot: 'L1', unit: 'C62' },
	{ ref: 'IT-3', lot: 'L2', unit: 'KGM' },
	{ ref: 'IT-4', lot: null, unit: null }
];

// Run 1, lowest cost: IT-1 S1 100 × 4 = 400, IT-2 S1 10 × 3 = 30, IT-3 S2 50 × 2 = 100, IT-4 S2 20 × 5 = 100;
// total 630, baseline 800, savings 170 (170 / 800 = 21.25%).
const one = run(
	1,
	[
		['S1', 'IT-1', 100, 4],
		['S1', 'IT-2', 10, 3],
		['S2', 'IT-3', 50, 2],
		['S2', 'IT-4', 20, 5]
	],
	{ total: 630, baseline: 800 }
);
// Run 2, a 60% cap: IT-1 S1 60 × 4 = 240 + S2 40 × 5 = 200 (440), IT-2 30, IT-3 S2 30 × 2 = 60 + S3
// 20 × 2.5 = 50 (110), IT-4 100; total 680, savings 120 (15%).
const two = run(
	2,
	[
		['S1', 'IT-1', 60, 4],
		['S2', 'IT-1', 40, 5],
		['S1', 'IT-2', 10, 3],
		['S2', 'IT-3', 30, 2],
		['S3', 'IT-3', 20, 2.5],
		['S2', 'IT-4', 20, 5]
	],
	{ total: 680, baseline: 800 }
);
// Run 3, adjusted from run 2 by two changes, with 25 of cost per award: IT-1 S2 100 × 5 = 500, IT-2 S3
// 10 × 3.5 = 35, IT-3 S2 50 × 2 = 100, IT-4 100; lines 735, total 735 + 25 = 760, savings 40 (5%).
const three = run(
	3,
	[
		['S2', 'IT-1', 100, 5],
		['S3', 'IT-2', 10, 3.5],
		['S2', 'IT-3', 50, 2],
		['S2', 'IT-4', 20, 5]
	],
	{ total: 760, baseline: 800 },
	{ adjustedFrom: { id: 'run-2', number: 2 }, manualChanges: 2 }
);

describe('runs compared', () => {
	it('takes the cheapest run as the reference and works out each run’s totals against it', () => {
		// Whatever the order the runs come in.
		expect(compareRuns([two, three, one], items).referenceIndex).toBe(2);
		const c = compareRuns([one, two, three], items);
		expect(c.referenceIndex).toBe(0);
		expect(
			c.runs.map((r) => ({
				number: r.number,
				reference: r.reference,
				savings: r.savings,
				savingsShare: r.savingsShare,
				difference: r.difference,
				differenceShare: r.differenceShare,
				suppliers: r.suppliers,
				splitItems: r.splitItems,
				adjustedFrom: r.adjustedFrom?.number ?? null,
				manualChanges: r.manualChanges
			}))
		).toEqual([
			// The reference has no difference of its own.
			{
				number: 1,
				reference: true,
				savings: 170,
				savingsShare: 0.2125,
				difference: null,
				differenceShare: null,
				suppliers: 2,
				splitItems: 0,
				adjustedFrom: null,
				manualChanges: 0
			},
			// 680 − 630 = 50, 50 / 630; S1, S2, S3; IT-1 and IT-3 split.
			{
				number: 2,
				reference: false,
				savings: 120,
				savingsShare: 0.15,
				difference: 50,
				differenceShare: 50 / 630,
				suppliers: 3,
				splitItems: 2,
				adjustedFrom: null,
				manualChanges: 0
			},
			// 760 − 630 = 130, 130 / 630; S2 and S3.
			{
				number: 3,
				reference: false,
				savings: 40,
				savingsShare: 0.05,
				difference: 130,
				differenceShare: 130 / 630,
				suppliers: 2,
				splitItems: 0,
				adjustedFrom: 2,
				manualChanges: 2
			}
		]);
	});

	it('adds up the spend by supplier and by lot, with the cost per award to reach the totals', () => {
		const c = compareRuns([one, two, three], items);
		// S2: run 1 100 + 100; run 2 200 + 60 + 100; run 3 500 + 100 + 100. S1: 400 + 30; 240 + 30; none.
		// S3: none; 50; 35. Sorted by the largest spend in any run.
		expect(c.suppliers).toEqual([
			{ supplier: 'S2', costs: [200, 360, 700] },
			{ supplier: 'S1', costs: [430, 270, 0] },
			{ supplier: 'S3', costs: [0, 50, 35] }
		]);
		// L1 = IT-1 + IT-2: 400 + 30, 440 + 30, 500 + 35; L2 = IT-3; IT-4 has no lot.
		expect(c.lots).toEqual([
			{ lot: 'L1', costs: [430, 470, 535] },
			{ lot: 'L2', costs: [100, 110, 100] },
			{ lot: null, costs: [100, 100, 100] }
		]);
		expect(c.awardCosts).toEqual([0, 0, 25]);
		expect(c.totals).toEqual([630, 680, 760]);
	});

	it('lists the items allocated differently, the largest cost difference to the reference first', () => {
		const c = compareRuns([one, two, three], items);
		// IT-4 is S2 20 in every run: not listed. IT-2 is S1 10, S1 10, S3 10 at 30, 30, 35.
		expect(c.differing.total).toBe(3);
		expect(c.differing.rows.map((r) => [r.item, r.costs, r.differences, r.largest])).toEqual([
			['IT-1', [400, 440, 500], [0, 40, 100], 100],
			['IT-3', [100, 110, 100], [0, 10, 0], 10],
			['IT-2', [30, 30, 35], [0, 0, 5], 5]
		]);
		expect(c.differing.rows[1]!.splits).toEqual([
			[{ supplier: 'S2', quantity: 50 }],
			[
				{ supplier: 'S2', quantity: 30 },
				{ supplier: 'S3', quantity: 20 }
			],
			[{ supplier: 'S2', quantity: 50 }]
		]);
		expect(c.differing.rows[1]).toMatchObject({ lot: 'L2', unit: 'KGM' });
	});

	it('takes the differences against the run asked for', () => {
		const c = compareRuns([one, two, three], items, { reference: 'run-2' });
		expect(c.referenceIndex).toBe(1);
		// Totals: 630 − 680 = −50, 760 − 680 = 80. IT-1: 400 − 440 = −40, 500 − 440 = 60; IT-3: −10, −10.
		expect(c.runs.map((r) => r.difference)).toEqual([-50, null, 80]);
		expect(c.differing.rows.map((r) => [r.item, r.differences, r.largest])).toEqual([
			['IT-1', [-40, 0, 60], 60],
			['IT-3', [-10, 0, -10], 10],
			['IT-2', [0, 0, 5], 5]
		]);
	});

	it('pages the items allocated differently on the server, 200 at a time', () => {
		// 250 items, all with S1 in the first run and S2 in the second; item k costs k more in the second.
		const many: ComparedItem[] = Array.from({ length: 250 }, (_, k) => ({
			ref: `X-${k + 1}`,
			lot: null,
			unit: null
		}));
		const first = run(
			1,
			many.map((i) => ['S1', i.ref, 1, 10] as Line),
			{ total: 2500, baseline: null }
		);
		const second = run(
			2,
			many.map((i, k) => ['S2', i.ref, 1, 10 + k + 1] as Line),
			// 2,500 + (1 + 2 + … + 250) = 2,500 + 250 · 251 / 2 = 33,875
			{ total: 33875, baseline: null }
		);
		const page1 = compareRuns([first, second], many);
		expect([page1.differing.total, page1.differing.pages, page1.differing.rows.length]).toEqual([
			250, 2, 200
		]);
		expect(page1.differing.rows[0]!.item).toBe('X-250');
		const page2 = compareRuns([first, second], many, { page: 2 });
		expect(page2.differing.rows.map((r) => r.item).slice(-1)).toEqual(['X-1']);
		expect(page2.differing.rows).toHaveLength(50);
		expect(compareRuns([first, second], many, { page: 9 }).differing.page).toBe(2);
		expect(page1.runs[1]!.savings).toBeNull();
	});

	it('writes the comparison as a workbook with the same figures, number formats and neutralised text', async () => {
		const hostile = run(4, [['=HYPERLINK("x")', 'IT-1', 100, 4.5]], { total: 450, baseline: 800 });
		const c = compareRuns([one, hostile], items, { pageSize: Number.MAX_SAFE_INTEGER });
		const bytes = await comparisonWorkbook({ reference: 'EV-1', title: 'Test', currency: 'EUR' }, c);
		const workbook = new ExcelJS.Workbook();
		await workbook.xlsx.load(bytes as unknown as ArrayBuffer);
		expect(workbook.worksheets.map((w) => w.name)).toEqual(['Summary', 'Suppliers', 'Lots', 'Differences']);
		const summary = workbook.getWorksheet('Summary')!;
		expect(summary.views[0]).toMatchObject({ state: 'frozen', ySplit: 1 });
		// Run 4 (450) is the cheaper: run 1 is 630 − 450 = 180 more.
		expect(summary.getRow(2).getCell(5).value).toBe(630);
		expect(summary.getRow(2).getCell(5).numFmt).toBe('#,##0.00');
		expect(summary.getRow(2).getCell(9).value).toBe(180);
		expect(summary.getRow(3).getCell(9).value).toBeNull();
		const suppliers = workbook.getWorksheet('Suppliers')!;
		expect(suppliers.getRow(2).getCell(1).value).toBe(`'=HYPERLINK("x")`);
		const total = workbook.getWorksheet('Lots')!.getRow(5);
		expect([1, 2, 3].map((k) => total.getCell(k).value)).toEqual(['Total', 630, 450]);
	});
});
