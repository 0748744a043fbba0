import ExcelJS from 'exceljs';
import { describe, expect, it } from 'vitest';
import {
	buildBidCsv,
	buildBidSheet,
	parseBidCsv,
	parseBidWorkbook,
	parseScreenPrices,
	type SheetEvent
} from './bid-sheet';

const event: SheetEvent = {
	reference: 'EV-2027-02',
	title: 'Criteria event',
	currency: 'EUR',
	bidValidityDays: 90,
	deadline: new Date('2027-03-01T12:00:00Z'),
	timeZone: 'Europe/Brussels',
	allowPriceBreaks: false,
	allowCapacity: false,
	allowBundles: false,
	items: [{ ref: 'IT-1', description: 'Case', lot: null, unit: 'C62', quantity: 100 }],
	criteria: [
		{ ref: 'LT', name: 'Lead time', unit: 'days' },
		{ ref: 'PT', name: 'Payment terms', unit: 'days' }
	]
};

describe('criteria in the bid sheet', () => {
	it('reads the answers of the Criteria sheet with the prices', async () => {
		const workbook = new ExcelJS.Workbook();
		await workbook.xlsx.load((await buildBidSheet(event, 'S')) as unknown as ArrayBuffer);
		const criteria = workbook.getWorksheet('Criteria')!;
		expect(criteria.getCell('A2').value).toBe('LT');
		expect(criteria.getCell('D2').protection?.locked).toBe(false);
		criteria.getCell('D2').value = 15;
		criteria.getCell('D3').value = 30;
		workbook.getWorksheet('Prices')!.getCell('F2').value = 10;
		const parsed = await parseBidWorkbook(event, Buffer.from(await workbook.xlsx.writeBuffer()));
		expect(parsed).toEqual({
			ok: true,
			bid: {
				lines: [{ item: 'IT-1', unitPrice: 10, maxQuantity: null, priceBreaks: [] }],
				capacity: null,
				bundles: [],
				answers: { LT: 15, PT: 30 }
			}
		});
	});

	it('reports a missing answer and a bad one by sheet, row and column', async () => {
		const workbook = new ExcelJS.Workbook();
		await workbook.xlsx.load((await buildBidSheet(event, 'S')) as unknown as ArrayBuffer);
		workbook.getWorksheet('Criteria')!.getCell('D3').value = '12,5';
		workbook.getWorksheet('Prices')!.getCell('F2').value = 10;
		const parsed = await parseBidWorkbook(event, Buffer.from(await workbook.xlsx.writeBuffer()));
		expect(parsed.ok ? null : parsed.problems).toEqual([
			{ sheet: 'Criteria', row: 2, column: 'D', message: 'the answer to "Lead time" is missing' },
			{
				sheet: 'Criteria',
				row: 3,
				column: 'D',
				message: '"12,5" is not a number: write the decimal mark as a point (12.5)'
			}
		]);
	});

	it('reads the criteria block after the items of a CSV, on its own rows', () => {
		const csv = buildBidCsv(event).trim().split('\r\n');
		// Row 1 the price header, row 2 IT-1, row 3 the criteria header, rows 4 and 5 LT and PT.
		expect(csv[2]).toBe('Criterion ref,Criterion,Unit,Your answer');
		const filled = [
			csv[0],
			'IT-1,Case,,C62,100,10',
			csv[2],
			'LT,Lead time,days,7',
			'PT,Payment terms,days,-1'
		];
		const parsed = parseBidCsv(event, filled.join('\n'));
		expect(parsed.ok ? null : parsed.problems).toEqual([
			{ sheet: 'CSV', row: 5, column: 'D', message: 'must not be negative' }
		]);
		const good = parseBidCsv(event, [...filled.slice(0, 4), 'PT,Payment terms,days,60'].join('\n'));
		expect(good.ok && good.bid.answers).toEqual({ LT: 7, PT: 60 });
	});

	it('refuses a CSV without the criteria block', () => {
		const parsed = parseBidCsv(
			event,
			['Item ref,Description,Lot,Unit,Quantity,Unit price (EUR)', 'IT-1,Case,,C62,100,10'].join('\n')
		);
		expect(parsed.ok ? null : parsed.problems).toEqual([
			{ sheet: 'CSV', row: null, column: null, message: 'the criteria are missing: LT, PT need an answer' }
		]);
	});

	it('takes the answers typed on screen, rows numbered as in the CSV', () => {
		// Row 1 the header, row 2 IT-1, row 3 the criteria header, row 4 LT, row 5 PT.
		const parsed = parseScreenPrices(event, [{ item: 'IT-1', cells: ['10'] }], null, null, {
			LT: '3',
			PT: ''
		});
		expect(parsed.ok ? null : parsed.problems).toEqual([
			{ sheet: 'On-screen prices', row: 5, column: 'D', message: 'the answer to "Payment terms" is missing' }
		]);
	});
});
