// A run as a workbook for the file: summary, allocation, supplier totals and rule costs. Every text cell
// from data is neutralised, so a spreadsheet never reads a supplier's or item's name as a formula.
import ExcelJS from 'exceljs';
import type { AwardResult } from '$lib/award/core/engine';
import { neutralise } from './sheets/bid-sheet';

/** What a workbook or a comparison needs of a run: the shape services/award-views' runJson returns. */
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

/** Two to four runs side by side, and the items whose allocation differs between them. */
export function compareRuns(runs: ExportedRun[]) {
	const summaries = runs.map((run) => {
		const result = run.result;
		const byItem = new Map<string, Map<string, number>>();
		for (const l of result?.awards ?? []) {
			const split = byItem.get(l.item) ?? new Map<string, number>();
			split.set(l.supplier, (split.get(l.supplier) ?? 0) + l.quantity);
			byItem.set(l.item, split);
		}
		return {
			id: run.id,
			number: run.number,
			plan: run.plan,
			totalCost: result?.totalCost ?? null,
			savings: result?.savings ?? null,
			suppliers: new Set((result?.awards ?? []).filter((l) => l.quantity > 0).map((l) => l.supplier)).size,
			splitItems: [...byItem.values()].filter((s) => s.size > 1).length,
			byItem
		};
	});
	const describe = (split: Map<string, number> | undefined) =>
		split
			? [...split]
					.sort(([a], [b]) => a.localeCompare(b))
					.map(([s, q]) => `${s} ${Math.round(q * 1e6) / 1e6}`)
					.join(' / ')
			: '—';
	const items = [...new Set(summaries.flatMap((s) => [...s.byItem.keys()]))];
	const differing = items
		.map((item) => ({ item, allocations: summaries.map((s) => describe(s.byItem.get(item))) }))
		.filter((row) => new Set(row.allocations).size > 1);
	return {
		runs: summaries.map(({ byItem: _b, ...rest }) => (void _b, rest)),
		differing
	};
}
