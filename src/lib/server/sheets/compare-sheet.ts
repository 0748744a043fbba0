// Runs compared, as a workbook: Summary (a row per run), Suppliers and Lots (a column per run) and
// Differences (every item allocated differently, the largest difference first). Frozen header, autofilter
// over the data, number formats in the event's currency. Every text cell from data is neutralised, so a
// spreadsheet never reads a plan's, supplier's or item's name as a formula.
import ExcelJS from 'exceljs';
import { EXCEL_SHARE_FORMAT, excelMoneyFormat, formatQuantity } from '$lib/format';
import type { RunComparison, SplitLine } from '../run-comparison';
import { neutralise } from './bid-sheet';

export interface ComparisonSheetEvent {
	reference: string;
	title: string;
	currency: string;
}

const splitText = (lines: SplitLine[], unit: string | null) =>
	lines.length
		? lines.map((l) => `${l.supplier}: ${formatQuantity(l.quantity)}${unit ? ` ${unit}` : ''}`).join('; ')
		: 'not awarded';

export async function comparisonWorkbook(
	event: ComparisonSheetEvent,
	comparison: RunComparison
): Promise<Buffer> {
	const { currency, runs } = comparison;
	const money = excelMoneyFormat(currency);
	const signedMoney = `+${money};-${money};${money}`;
	const reference = runs[comparison.referenceIndex]!;
	const runHead = (suffix: string) => runs.map((r) => `Run ${r.number} ${suffix}`.trim());
	const workbook = new ExcelJS.Workbook();
	workbook.creator = 'Tenderloom';

	const summary = workbook.addWorksheet('Summary', { views: [{ state: 'frozen', xSplit: 1, ySplit: 1 }] });
	const summaryHead = [
		'Run',
		'Plan',
		'Status',
		'Outcome',
		`Total cost (${currency})`,
		`Baseline (${currency})`,
		`Savings against baseline (${currency})`,
		'Savings against baseline',
		`Difference to run ${reference.number} (${currency})`,
		`Difference to run ${reference.number}`,
		'Suppliers awarded',
		'Split items',
		'Items not covered',
		'Adjusted from run',
		'Manual changes'
	];
	summary.addRow(summaryHead).font = { bold: true };
	for (const run of runs) {
		const row = summary.addRow([
			run.number,
			neutralise(run.plan),
			run.status,
			run.outcome,
			run.totalCost,
			run.baselineCost,
			run.savings,
			run.savingsShare,
			run.reference ? null : run.difference,
			run.reference ? null : run.differenceShare,
			run.suppliers,
			run.splitItems,
			run.uncoveredItems,
			run.adjustedFrom ? (run.adjustedFrom.number ?? 'a removed run') : null,
			run.adjustedFrom ? run.manualChanges : null
		]);
		for (const k of [5, 6, 7]) row.getCell(k).numFmt = money;
		row.getCell(9).numFmt = signedMoney;
		for (const k of [8, 10]) row.getCell(k).numFmt = EXCEL_SHARE_FORMAT;
	}
	summary.autoFilter = {
		from: { row: 1, column: 1 },
		to: { row: runs.length + 1, column: summaryHead.length }
	};
	summary.addRow([]);
	summary.addRow(['Event', neutralise(`${event.reference} · ${event.title}`)]);
	summary.addRow(['Reference run', `Run ${reference.number}: the differences are taken against it`]);
	summary.addRow(['Note', 'An optimised allocation is decision support, not a legal award.']);
	summary.columns.forEach((c, k) => (c.width = k === 1 ? 32 : 18));

	const suppliers = workbook.addWorksheet('Suppliers', {
		views: [{ state: 'frozen', xSplit: 1, ySplit: 1 }]
	});
	suppliers.addRow(['Supplier', ...runHead(`(${currency})`)]).font = { bold: true };
	for (const s of comparison.suppliers) {
		const row = suppliers.addRow([neutralise(s.supplier), ...s.costs]);
		runs.forEach((_, k) => (row.getCell(2 + k).numFmt = money));
	}
	suppliers.autoFilter = {
		from: { row: 1, column: 1 },
		to: { row: comparison.suppliers.length + 1, column: runs.length + 1 }
	};
	suppliers.columns.forEach((c, k) => (c.width = k === 0 ? 32 : 18));

	const lots = workbook.addWorksheet('Lots', { views: [{ state: 'frozen', xSplit: 1, ySplit: 1 }] });
	lots.addRow(['Lot', ...runHead(`(${currency})`)]).font = { bold: true };
	const moneyRow = (cells: (string | number | null)[]) => {
		const row = lots.addRow(cells);
		runs.forEach((_, k) => (row.getCell(2 + k).numFmt = money));
		return row;
	};
	for (const l of comparison.lots) moneyRow([l.lot === null ? 'No lot' : neutralise(l.lot), ...l.costs]);
	lots.autoFilter = {
		from: { row: 1, column: 1 },
		to: { row: comparison.lots.length + 1, column: runs.length + 1 }
	};
	// Below the filtered rows, so sorting the lots never moves the totals.
	if (comparison.awardCosts) moneyRow(['Costs per award', ...comparison.awardCosts]);
	moneyRow(['Total', ...comparison.totals]).font = { bold: true };
	lots.columns.forEach((c, k) => (c.width = k === 0 ? 24 : 18));

	const differences = workbook.addWorksheet('Differences', {
		views: [{ state: 'frozen', xSplit: 1, ySplit: 1 }]
	});
	const differencesHead = [
		'Item',
		'Lot',
		'Unit',
		...runs.flatMap((r) => [
			`Run ${r.number} split`,
			`Run ${r.number} cost (${currency})`,
			`Run ${r.number} difference to run ${reference.number} (${currency})`
		]),
		`Largest difference (${currency})`
	];
	differences.addRow(differencesHead).font = { bold: true };
	const rows = comparison.differing.rows;
	for (const d of rows) {
		const row = differences.addRow([
			neutralise(d.item),
			d.lot === null ? 'No lot' : neutralise(d.lot),
			neutralise(d.unit ?? ''),
			...runs.flatMap((_, k) => [
				neutralise(splitText(d.splits[k]!, d.unit)),
				d.costs[k],
				k === comparison.referenceIndex ? null : d.differences[k]
			]),
			d.largest
		]);
		runs.forEach((_, k) => {
			row.getCell(5 + 3 * k).numFmt = money;
			row.getCell(6 + 3 * k).numFmt = signedMoney;
		});
		row.getCell(differencesHead.length).numFmt = money;
	}
	differences.autoFilter = {
		from: { row: 1, column: 1 },
		to: { row: rows.length + 1, column: differencesHead.length }
	};
	differences.columns.forEach((c, k) => (c.width = k < 3 ? 14 : (k - 3) % 3 === 0 ? 36 : 18));
	return Buffer.from(await workbook.xlsx.writeBuffer());
}
