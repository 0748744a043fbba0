// A run as a workbook for the file: summary, allocation, supplier totals and rule costs. Every text cell
// from data is neutralised, so a spreadsheet never reads a supplier's or item's name as a formula.
import ExcelJS from 'exceljs';
import type { AwardResult } from '$lib/award/core/engine';
import { excelMoneyFormat, excelQuantityColumnFormat, excelUnitPriceFormat } from '$lib/format';
import { neutralise } from './sheets/bid-sheet';

/** A table sheet's finish: the header row bold and frozen, an autofilter over it, and column formats. */
function finishTable(sheet: ExcelJS.Worksheet, formats: (string | null)[], widths: number[]): void {
	sheet.getRow(1).font = { bold: true };
	sheet.views = [{ state: 'frozen', ySplit: 1 }];
	sheet.autoFilter = { from: { row: 1, column: 1 }, to: { row: 1, column: formats.length } };
	formats.forEach((format, k) => {
		const column = sheet.getColumn(k + 1);
		column.width = widths[k] ?? 20;
		if (format) column.numFmt = format;
	});
}

/** What a workbook needs of a run: the shape services/award-views' runJson returns. */
export interface ExportedRun {
	id: string;
	number: number;
	plan: string;
	status: string;
	currency: string;
	problemSha256: string;
	resultSha256: string | null;
	solverVersion: string | null;
	rules: { index: number; text: string }[];
	result: AwardResult | null;
}

/**
 * `priceTotal`: the award at the suppliers' own prices where the run minimised evaluated cost (price plus
 * the criteria in money, services/run-evaluation.ts); its stored costs are then evaluated and named so.
 */
export async function runWorkbook(
	reference: string,
	run: ExportedRun,
	priceTotal: number | null = null
): Promise<Buffer> {
	const result = run.result;
	const money = excelMoneyFormat(run.currency);
	const evaluated = priceTotal !== null;
	const cost = evaluated ? 'Evaluated cost' : 'Cost';
	const baseline = result?.baselineCost ?? null;
	const workbook = new ExcelJS.Workbook();
	workbook.creator = 'Tenderloom';
	const summary = workbook.addWorksheet('Summary');
	summary.addRows([
		['Event', neutralise(reference)],
		['Run', run.number],
		['Plan', neutralise(run.plan)],
		['Status', run.status],
		['Outcome', result?.status ?? ''],
		['Method', result?.method ?? ''],
		[`${evaluated ? 'Total evaluated cost' : 'Total cost'} (${run.currency})`, result?.totalCost ?? null],
		[`Baseline (${run.currency})`, baseline],
		[
			`Savings${evaluated ? ' at the suppliers’ prices' : ''} (${run.currency})`,
			evaluated && baseline !== null ? baseline - priceTotal : (result?.savings ?? null)
		],
		['Problem SHA-256', run.problemSha256],
		['Result SHA-256', run.resultSha256 ?? ''],
		['Solver', run.solverVersion ?? ''],
		['Note', 'An optimised allocation is decision support, not a legal award.'],
		...(evaluated
			? [
					[`Total at the suppliers' prices (${run.currency})`, priceTotal],
					[
						'Evaluated cost',
						'The suppliers’ prices plus the money of the event’s non-price criteria: what the award minimised. Suppliers are paid their prices.'
					]
				]
			: [])
	]);
	if (evaluated) summary.getRow(14).getCell(2).numFmt = money;
	for (const row of [7, 8, 9]) summary.getRow(row).getCell(2).numFmt = money;
	run.rules.forEach((r) => summary.addRow([`Rule ${r.index + 1}`, neutralise(r.text)]));
	summary.getColumn(1).width = 24;
	summary.getColumn(2).width = 80;

	const allocation = workbook.addWorksheet('Allocation');
	allocation.addRow([
		'Item',
		'Supplier',
		'Quantity',
		`${evaluated ? 'Evaluated unit cost' : 'Unit price'} (${run.currency})`,
		`${cost} (${run.currency})`,
		'Bundle'
	]);
	for (const l of result?.awards ?? [])
		allocation.addRow([
			neutralise(l.item),
			neutralise(l.supplier),
			l.quantity,
			l.unitPrice,
			l.cost,
			neutralise(l.bundle ?? '')
		]);
	finishTable(
		allocation,
		[
			null,
			null,
			excelQuantityColumnFormat((result?.awards ?? []).map((l) => l.quantity)),
			excelUnitPriceFormat(run.currency),
			money,
			null
		],
		[16, 28, 14, 18, 18, 16]
	);

	const totals = workbook.addWorksheet('Suppliers');
	totals.addRow(['Supplier', 'Quantity', `${cost} (${run.currency})`, 'Lines']);
	for (const t of result?.supplierTotals ?? [])
		totals.addRow([neutralise(t.supplier), t.quantity, t.cost, t.items]);
	finishTable(
		totals,
		[null, excelQuantityColumnFormat((result?.supplierTotals ?? []).map((t) => t.quantity)), money, '#,##0'],
		[28, 16, 18, 10]
	);

	const costs = workbook.addWorksheet('Rule costs');
	costs.addRow([
		'Rule',
		`Cost, all other rules kept (${run.currency})`,
		`Added on top of the rules above (${run.currency})`,
		`Running total (${run.currency})`,
		`Within ± (${run.currency})`
	]);
	for (const c of result?.ruleCosts ?? [])
		costs.addRow([
			neutralise(run.rules[c.rule]?.text ?? c.label),
			c.cost,
			c.costOnTopOfEarlier,
			c.runningTotal,
			c.tolerance
		]);
	finishTable(costs, [null, money, money, money, '0.000000'], [70, 22, 22, 22, 16]);
	return Buffer.from(await workbook.xlsx.writeBuffer());
}
