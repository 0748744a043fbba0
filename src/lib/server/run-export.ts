// A run as a workbook for the file: summary, allocation, supplier totals and rule costs. Every text cell
// from data is neutralised, so a spreadsheet never reads a supplier's or item's name as a formula.
import ExcelJS from 'exceljs';
import type { AwardResult } from '$lib/award/core/engine';
import { neutralise } from './sheets/bid-sheet';

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

export async function runWorkbook(reference: string, run: ExportedRun): Promise<Buffer> {
	const result = run.result;
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
		[`Total cost (${run.currency})`, result?.totalCost ?? null],
		[`Baseline (${run.currency})`, result?.baselineCost ?? null],
		[`Savings (${run.currency})`, result?.savings ?? null],
		['Problem SHA-256', run.problemSha256],
		['Result SHA-256', run.resultSha256 ?? ''],
		['Solver', run.solverVersion ?? ''],
		['Note', 'An optimised allocation is decision support, not a legal award.']
	]);
	run.rules.forEach((r) => summary.addRow([`Rule ${r.index + 1}`, neutralise(r.text)]));
	summary.getColumn(1).width = 24;
	summary.getColumn(2).width = 80;

	const allocation = workbook.addWorksheet('Allocation');
	allocation.addRow([
		'Item',
		'Supplier',
		'Quantity',
		`Unit price (${run.currency})`,
		`Cost (${run.currency})`,
		'Bundle'
	]).font = {
		bold: true
	};
	for (const l of result?.awards ?? [])
		allocation.addRow([
			neutralise(l.item),
			neutralise(l.supplier),
			l.quantity,
			l.unitPrice,
			l.cost,
			neutralise(l.bundle ?? '')
		]);
	allocation.columns.forEach((c) => (c.width = 20));

	const totals = workbook.addWorksheet('Suppliers');
	totals.addRow(['Supplier', 'Quantity', `Cost (${run.currency})`, 'Lines']).font = { bold: true };
	for (const t of result?.supplierTotals ?? [])
		totals.addRow([neutralise(t.supplier), t.quantity, t.cost, t.items]);
	totals.columns.forEach((c) => (c.width = 22));

	const costs = workbook.addWorksheet('Rule costs');
	costs.addRow([
		'Rule',
		`Cost, all other rules kept (${run.currency})`,
		`Added on top of the rules above (${run.currency})`,
		`Running total (${run.currency})`,
		`Within ± (${run.currency})`
	]).font = { bold: true };
	for (const c of result?.ruleCosts ?? [])
		costs.addRow([
			neutralise(run.rules[c.rule]?.text ?? c.label),
			c.cost,
			c.costOnTopOfEarlier,
			c.runningTotal,
			c.tolerance
		]);
	costs.getColumn(1).width = 70;
	return Buffer.from(await workbook.xlsx.writeBuffer());
}
