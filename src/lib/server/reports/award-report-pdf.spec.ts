import ExcelJS from 'exceljs';
import { describe, expect, it } from 'vitest';
import { embeddedFonts, pdfPages, pdfText } from '../../../../tests/support/pdf';
import { formatMoney } from '$lib/format';
import type { AwardReport } from './award-report';
import { awardReportPdf } from './award-report-pdf';
import { awardReportWorkbook } from './award-report-sheet';

const at = (iso: string) => new Date(iso);

/** A made-up approved run: 130 lines to one supplier, so its table runs over pages. */
function aReport(): AwardReport {
	const lines = Array.from({ length: 130 }, (_, k) => ({
		supplier: 'Zielona Łąka Folie',
		item: `IT-${k + 1}`,
		quantity: 100 + k,
		unitPrice: 2.5,
		cost: (100 + k) * 2.5
	}));
	const total = lines.reduce((a, l) => a + l.cost, 0) + 1234.5;
	return {
		generatedAt: at('2027-03-10T09:30:00Z'),
		event: {
			id: 'e',
			reference: 'EV-REPORT-1',
			title: 'Report test event',
			currency: 'EUR',
			incoterm: 'DAP',
			deliveryPlace: 'Test town',
			deadline: at('2027-03-01T16:00:00Z'),
			openedAt: at('2027-03-01T16:00:05Z'),
			timeZone: 'Europe/Berlin',
			state: 'awarded',
			items: 131
		},
		run: {
			id: 'r',
			number: 3,
			plan: 'Dual sourcing',
			createdBy: 'Test buyer',
			finishedAt: at('2027-03-02T10:00:00Z'),
			outcome: 'optimal',
			method: 'mip',
			gap: 0,
			approved: true,
			problemSha256: 'a'.repeat(64),
			resultSha256: 'b'.repeat(64),
			solverVersion: 'test',
			adjustedFrom: null
		},
		totals: {
			totalCost: total,
			priceTotal: null,
			baselineCost: total * 1.1,
			savings: total * 0.1,
			savingsShare: 0.1 / 1.1
		},
		bidders: [
			{
				name: 'Zielona Łąka Folie',
				revision: 2,
				submittedAt: at('2027-02-20T08:00:00Z'),
				withdrawn: false,
				itemsBid: 130,
				total: total - 1234.5,
				awardedLines: 130,
				awardedCost: total - 1234.5
			},
			{
				name: '=Other supplier',
				revision: 1,
				submittedAt: at('2027-02-21T08:00:00Z'),
				withdrawn: false,
				itemsBid: 1,
				total: 1234.5,
				awardedLines: 1,
				awardedCost: 1234.5
			}
		],
		rules: [
			{
				index: 0,
				text: 'No supplier gets more than 60% of any item',
				cost: 321.25,
				costOnTopOfEarlier: 321.25,
				runningTotal: 321.25,
				tolerance: 0
			}
		],
		ruleCostsKnown: true,
		evaluatedCosts: null,
		supplierTotals: [
			{
				supplier: 'Zielona Łąka Folie',
				quantity: lines.reduce((a, l) => a + l.quantity, 0),
				cost: total - 1234.5,
				items: 130
			},
			{ supplier: '=Other supplier', quantity: 10, cost: 1234.5, items: 1 }
		],
		awards: [
			...lines,
			{ supplier: '=Other supplier', item: 'IT-131', quantity: 10, unitPrice: 123.45, cost: 1234.5 }
		],
		uncoveredItems: [],
		lowestCost: {
			sameRun: false,
			runId: 'l',
			number: 1,
			totalCost: total - 321.25,
			difference: 321.25,
			share: 321.25 / (total - 321.25)
		},
		changes: [],
		signoffs: [
			{
				submittedBy: 'Test buyer',
				submittedAt: at('2027-03-03T09:00:00Z'),
				justification: 'Dual sourcing keeps a second supplier warm.',
				boundHash: 'c'.repeat(64),
				decision: 'approve',
				decidedBy: 'Test approver',
				decidedAt: at('2027-03-04T14:05:00Z'),
				comment: 'Agreed.',
				supersededAt: null,
				supersededReason: null
			}
		],
		notices: [
			{
				supplier: 'Zielona Łąka Folie',
				kind: 'award',
				status: 'sent',
				queuedAt: at('2027-03-04T14:05:00Z'),
				sentAt: at('2027-03-04T14:05:02Z'),
				standstillEndsOn: '2027-03-14'
			}
		],
		trailHead: { seq: 42, hash: 'd'.repeat(64) }
	};
}

describe('the award report as a PDF', () => {
	it('sets every page in the embedded Public Sans, never a standard PDF font', async () => {
		const fonts = embeddedFonts(await awardReportPdf(aReport()));
		expect(fonts.baseFonts.sort()).toEqual(['PublicSans-Bold', 'PublicSans-Regular']);
		expect(fonts.fontFiles).toBeGreaterThanOrEqual(2);
		expect(fonts.standardFonts).toBe(0);
	});

	it('carries the figures as formatted, times in the event’s zone, and letters beyond Latin-1 intact', async () => {
		const report = aReport();
		const text = await pdfText(await awardReportPdf(report));
		expect(text).toContain(formatMoney(report.totals.totalCost!, 'EUR'));
		expect(text).toContain('No supplier gets more than 60% of any item');
		expect(text).toContain('321.25');
		// 14:05 UTC is 15:05 in Berlin in March (CET, UTC+1).
		expect(text).toContain('Decided at 2027-03-04 15:05 (Europe/Berlin)');
		expect(text).toContain('Zielona Łąka Folie');
		expect(text).toContain('Decision support, not a legal award');
	});

	it('lists the lines excluded as abnormally low that the run was built without', async () => {
		const report = {
			...aReport(),
			excluded: [
				{
					supplier: 'Test Supplier D',
					item: 'IT-7',
					reason: 'Price unexplained.',
					excludedAt: '2027-03-01T10:00:00Z'
				}
			]
		};
		const text = await pdfText(await awardReportPdf(report));
		expect(text).toContain('Excluded as abnormally low');
		expect(text).toContain('Test Supplier D, line IT-7: Price unexplained.');
		expect(await pdfText(await awardReportPdf(aReport()))).not.toContain('Excluded as abnormally low');
	});

	it('names the round of bids a run used, once there was more than one', async () => {
		const base = aReport();
		const second = { ...base, run: { ...base.run, round: 2 } };
		expect(await pdfText(await awardReportPdf(second))).toContain(
			`Run ${base.run.number} of the plan “${base.run.plan}”, on the bids of round 2,`
		);
		expect(await pdfText(await awardReportPdf(base))).not.toContain('on the bids of round');
	});

	it('continues a long table on the next page under its header, with page numbers in the footer', async () => {
		const pages = await pdfPages(await awardReportPdf(aReport()));
		expect(pages.length).toBeGreaterThan(2);
		const continued = pages.slice(1).filter((p) => p.some((l) => l === 'Zielona Łąka Folie (continued)'));
		expect(continued.length).toBeGreaterThan(0);
		for (const page of continued)
			expect(page.some((l) => l.startsWith('Item Quantity Unit price (EUR)'))).toBe(true);
		pages.forEach((page, k) => {
			expect(page.at(-1)).toBe(`EV-REPORT-1 · award report, run 3 Page ${k + 1} of ${pages.length}`);
		});
		expect(pages[0]!.join(' ')).toContain('take advice from counsel');
	});
});

describe('the award report as a workbook', () => {
	it('has a sheet per part with frozen headers, the figures as numbers and text neutralised', async () => {
		const report = aReport();
		const workbook = new ExcelJS.Workbook();
		await workbook.xlsx.load((await awardReportWorkbook(report)) as unknown as ArrayBuffer);
		expect(workbook.worksheets.map((w) => w.name)).toEqual([
			'Summary',
			'Bidders',
			'Rules',
			'Award',
			'Changes',
			'Sign-off',
			'Notices'
		]);
		for (const ws of workbook.worksheets) expect(ws.views[0]).toMatchObject({ state: 'frozen', ySplit: 1 });
		const award = workbook.getWorksheet('Award')!;
		expect(award.rowCount).toBe(1 + 131);
		expect(award.getRow(2).getCell(5).numFmt).toBe('#,##0.00');
		expect(award.getRow(132).getCell(1).value).toBe("'=Other supplier");
		const summary = workbook.getWorksheet('Summary')!;
		const total = summary.getColumn(1).values.indexOf('Total cost (EUR)');
		expect(summary.getRow(total).getCell(2).value).toBe(report.totals.totalCost);
	});
});

describe('the PDF writer', () => {
	it('cuts a word longer than a line into lines that fit, losing no character', async () => {
		const { ReportPdf } = await import('./pdf-writer');
		const pdf = new ReportPdf({ title: 't', subject: 's', createdAt: at('2027-03-10T09:30:00Z') });
		// A justification of 4,000 characters without a space (the submit form allows it).
		const word = 'x'.repeat(3990) + 'ŁąkaZ';
		const lines = pdf.wrap(word, 120);
		expect(lines.join('')).toBe(word);
		expect(lines.length).toBeGreaterThan(10);
		for (const line of lines) expect(pdf.measure(line)).toBeLessThanOrEqual(120 + 1e-6);
	});
});
