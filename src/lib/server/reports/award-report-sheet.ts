// The award report as a workbook: one sheet per part (Summary, Bidders, Rules, Award, Changes, Sign-off,
// Notices), each with a frozen header row and a filter, amounts in the currency's minor units. Times are
// the event's wall clock, and each header names the zone. Every text cell from data is neutralised, so a
// spreadsheet never reads a name, justification or comment as a formula.
import ExcelJS from 'exceljs';
import { EXCEL_SHARE_FORMAT, excelMoneyFormat, excelQuantityFormat, excelUnitPriceFormat } from '$lib/format';
import { toLocalInput } from '$lib/time';
import { neutralise } from '../sheets/bid-sheet';
import { REPORT_CAUTION, describeChange, type AwardReport } from './award-report';

const TIME_FORMAT = 'yyyy-mm-dd hh:mm';
const DATE_FORMAT = 'yyyy-mm-dd';

type Cell = string | number | Date | null;

export async function awardReportWorkbook(report: AwardReport): Promise<Buffer> {
	const { event, run, totals } = report;
	const currency = event.currency;
	const zone = event.timeZone;
	const money = excelMoneyFormat(currency);
	// A run on evaluated cost stores evaluated costs on its lines: they are named so.
	const evaluated = totals.priceTotal !== null;
	// exceljs writes a Date by its UTC fields: the zone's wall clock goes in as if it were UTC.
	const wallClock = (date: Date | null) => (date ? new Date(`${toLocalInput(date, zone)}:00Z`) : null);
	const text = (value: string | null | undefined) => neutralise(value ?? '');

	const workbook = new ExcelJS.Workbook();
	workbook.creator = 'Tenderloom';
	workbook.created = report.generatedAt;

	/** A sheet with a bold, frozen header row, a filter over it, and a number format per column. */
	const sheet = (
		name: string,
		columns: { header: string; width: number; format?: string | ((value: Cell) => string | undefined) }[],
		rows: Cell[][]
	) => {
		const ws = workbook.addWorksheet(name, { views: [{ state: 'frozen', ySplit: 1 }] });
		ws.addRow(columns.map((c) => c.header)).font = { bold: true };
		for (const values of rows) {
			const row = ws.addRow(values);
			columns.forEach((c, k) => {
				const format = typeof c.format === 'function' ? c.format(values[k] ?? null) : c.format;
				if (format) row.getCell(k + 1).numFmt = format;
			});
		}
		columns.forEach((c, k) => (ws.getColumn(k + 1).width = c.width));
		ws.autoFilter = { from: { row: 1, column: 1 }, to: { row: 1, column: columns.length } };
		return ws;
	};
	const quantityFormat = (value: Cell) =>
		typeof value === 'number' ? excelQuantityFormat(value) : undefined;

	const summary: [string, Cell, string?][] = [
		['Event reference', text(event.reference)],
		['Title', text(event.title)],
		['Currency', currency],
		[
			'Delivery terms',
			text(`${event.incoterm} (Incoterms 2020)${event.deliveryPlace ? `, ${event.deliveryPlace}` : ''}`)
		],
		[`Bid deadline (${zone})`, wallClock(event.deadline), TIME_FORMAT],
		[`Bids opened (${zone})`, wallClock(event.openedAt), TIME_FORMAT],
		['Run', run.number],
		['Plan', text(run.plan)],
		['Sign-off', run.approved ? 'approved' : 'awaiting sign-off'],
		['Outcome', run.outcome],
		...(totals.priceTotal === null
			? ([[`Total cost (${currency})`, totals.totalCost, money]] as [string, Cell, string][])
			: ([
					[`Total evaluated cost, price and criteria (${currency})`, totals.totalCost, money],
					[`Total at the suppliers' prices (${currency})`, totals.priceTotal, money]
				] as [string, Cell, string][])),
		[`Baseline (${currency})`, totals.baselineCost, money],
		[
			`Savings${totals.priceTotal === null ? '' : ' at the suppliers’ prices'} (${currency})`,
			totals.savings,
			money
		],
		['Savings share of the baseline', totals.savingsShare, EXCEL_SHARE_FORMAT],
		...(report.lowestCost && !report.lowestCost.sameRun
			? ([
					[
						`Lowest-cost plan, run ${report.lowestCost.number} (${currency})`,
						report.lowestCost.totalCost,
						money
					],
					[`Difference to the lowest cost (${currency})`, report.lowestCost.difference, money],
					['Difference share', report.lowestCost.share, EXCEL_SHARE_FORMAT]
				] as [string, Cell, string][])
			: report.lowestCost?.sameRun
				? ([['Lowest-cost plan', 'this run is the lowest-cost plan’s latest run']] as [string, Cell][])
				: []),
		['Adjusted from run', run.adjustedFrom?.number ?? null],
		['Bids of round', run.round ?? 1],
		['Problem SHA-256', run.problemSha256],
		['Result SHA-256', run.resultSha256 ?? ''],
		['Trail head entry', report.trailHead?.seq ?? null],
		['Trail head hash', report.trailHead?.hash ?? ''],
		[`Report generated (${zone})`, wallClock(report.generatedAt), TIME_FORMAT],
		['Note', REPORT_CAUTION]
	];
	const summarySheet = sheet(
		'Summary',
		[
			{ header: 'Field', width: 40 },
			{ header: 'Value', width: 80 }
		],
		summary.map(([label, value]) => [label, value])
	);
	summary.forEach(([, , format], k) => {
		if (format) summarySheet.getRow(k + 2).getCell(2).numFmt = format;
	});
	summarySheet.getColumn(2).alignment = { horizontal: 'left' };

	sheet(
		'Bidders',
		[
			{ header: 'Supplier', width: 32 },
			{ header: 'Revision', width: 10 },
			{ header: `Submitted (${zone})`, width: 20, format: TIME_FORMAT },
			{ header: 'Withdrawn', width: 11 },
			{ header: 'Items priced', width: 13, format: '#,##0' },
			{ header: `Total at own prices (${currency})`, width: 22, format: money },
			{ header: 'Awarded lines', width: 14, format: '#,##0' },
			{ header: `Awarded cost (${currency})`, width: 20, format: money },
			{ header: 'Bid currency', width: 13 },
			{ header: `Rate (${currency} per unit)`, width: 16 },
			{ header: 'Awarded cost in bid currency', width: 24, format: '#,##0.###' }
		],
		report.bidders.map((b) => [
			text(b.name),
			b.revision,
			wallClock(b.submittedAt),
			b.withdrawn ? 'yes' : 'no',
			b.itemsBid,
			b.withdrawn ? null : b.total,
			b.awardedLines,
			b.awardedCost,
			b.ownCurrency?.code ?? currency,
			b.ownCurrency?.rate ?? 1,
			b.ownCurrency?.awardedCost ?? b.awardedCost
		])
	);

	sheet(
		'Rules',
		[
			{ header: 'Rule', width: 6 },
			{ header: 'Text', width: 70 },
			{ header: `Cost, other rules kept (${currency})`, width: 24, format: money },
			{ header: `Added to the rules above (${currency})`, width: 26, format: money },
			{ header: `Running total (${currency})`, width: 20, format: money },
			{ header: `Within ± (${currency})`, width: 16, format: money }
		],
		report.rules.map((r) => [
			r.index + 1,
			text(r.text),
			r.cost,
			r.costOnTopOfEarlier,
			r.runningTotal,
			r.tolerance
		])
	);

	sheet(
		'Award',
		[
			{ header: 'Supplier', width: 32 },
			{ header: 'Item', width: 18 },
			{ header: 'Quantity', width: 14, format: quantityFormat },
			{
				header: `${evaluated ? 'Evaluated unit cost' : 'Unit price'} (${currency})`,
				width: 18,
				format: excelUnitPriceFormat(currency)
			},
			{ header: `${evaluated ? 'Evaluated cost' : 'Cost'} (${currency})`, width: 18, format: money },
			{ header: 'Bundle', width: 24 }
		],
		report.supplierTotals.flatMap((t) =>
			report.awards
				.filter((l) => l.supplier === t.supplier)
				.map((l) => [text(l.supplier), text(l.item), l.quantity, l.unitPrice, l.cost, text(l.bundle)])
		)
	);

	if (report.evaluatedCosts)
		sheet(
			'Evaluated cost',
			[
				{ header: 'Supplier', width: 32 },
				{ header: `Price (${currency})`, width: 18, format: money },
				{ header: `Evaluated cost (${currency})`, width: 22, format: money }
			],
			report.evaluatedCosts.map((t) => [text(t.supplier), t.price, t.evaluated])
		);

	sheet(
		'Changes',
		[
			{ header: `When (${zone})`, width: 18, format: TIME_FORMAT },
			{ header: 'By', width: 22 },
			{ header: 'Kind', width: 10 },
			{ header: 'Change', width: 40 },
			{ header: 'Item', width: 16 },
			{ header: 'Supplier', width: 28 },
			{ header: 'To', width: 28 },
			{ header: 'Quantity', width: 12, format: quantityFormat },
			{ header: `Cost change (${currency})`, width: 18, format: money },
			{ header: 'Justification', width: 60 }
		],
		report.changes.map((c) => [
			wallClock(new Date(c.at)),
			text(c.by.name),
			c.kind,
			text(describeChange(c)),
			text(c.item),
			text(c.supplier),
			text(c.to),
			c.quantity ?? null,
			c.costChange,
			text(c.justification)
		])
	);

	sheet(
		'Sign-off',
		[
			{ header: 'Submitted by', width: 22 },
			{ header: `Submitted at (${zone})`, width: 20, format: TIME_FORMAT },
			{ header: 'Justification', width: 60 },
			{ header: 'Bound hash', width: 66 },
			{ header: 'Decision', width: 12 },
			{ header: 'Decided by', width: 22 },
			{ header: `Decided at (${zone})`, width: 20, format: TIME_FORMAT },
			{ header: 'Comment', width: 40 },
			{ header: `Superseded at (${zone})`, width: 20, format: TIME_FORMAT },
			{ header: 'Superseded because', width: 30 }
		],
		report.signoffs.map((s) => [
			text(s.submittedBy),
			wallClock(s.submittedAt),
			text(s.justification),
			s.boundHash,
			s.decision === 'approve'
				? 'approved'
				: s.decision === 'return'
					? 'returned'
					: s.supersededAt
						? 'superseded before a decision'
						: 'pending',
			text(s.decidedBy),
			wallClock(s.decidedAt),
			text(s.comment),
			wallClock(s.supersededAt),
			text(s.supersededReason)
		])
	);

	sheet(
		'Notices',
		[
			{ header: 'Supplier', width: 32 },
			{ header: 'Notice', width: 10 },
			{ header: 'Status', width: 10 },
			{ header: `Queued at (${zone})`, width: 20, format: TIME_FORMAT },
			{ header: `Sent at (${zone})`, width: 20, format: TIME_FORMAT },
			{ header: 'Standstill ends (confirm locally)', width: 30, format: DATE_FORMAT }
		],
		report.notices.map((n) => [
			text(n.supplier),
			n.kind,
			n.status,
			wallClock(n.queuedAt),
			wallClock(n.sentAt),
			new Date(`${n.standstillEndsOn}T00:00:00Z`)
		])
	);

	return Buffer.from(await workbook.xlsx.writeBuffer());
}
