import ExcelJS from 'exceljs';
import { describe, expect, it } from 'vitest';
import { ownLinesWorkbook } from './notice-sending';

describe('the award notice’s workbook for a supplier that bid in another currency', () => {
	it('gives each line in the event currency and in the supplier’s own', async () => {
		// Invented rate 1 USD = 0.9213 EUR: 100 × 10.40 USD = 1,040.00 USD; 10.40 × 0.9213 = 9.58152 EUR,
		// × 100 = 958.152 EUR.
		const bytes = await ownLinesWorkbook(
			'EV-1',
			'Supplier One',
			[{ item: 'IT-1', quantity: 100, unitPrice: 9.58152, cost: 958.152 }],
			'EUR',
			{
				code: 'USD',
				rate: 0.9213,
				source: 'invented',
				rateDate: '2026-12-01',
				lines: [{ item: 'IT-1', unitPrice: 10.4, cost: 1040 }],
				total: 1040,
				eventTotal: 958.15
			}
		);
		const workbook = new ExcelJS.Workbook();
		await workbook.xlsx.load(bytes as unknown as ArrayBuffer);
		const sheet = workbook.getWorksheet('Award')!;
		expect(sheet.getRow(2).values).toEqual([
			undefined,
			'Item',
			'Quantity',
			'Unit price (EUR)',
			'Cost (EUR)',
			'Unit price (USD)',
			'Cost (USD)'
		]);
		expect(sheet.getRow(3).values).toEqual([undefined, 'IT-1', 100, 9.58152, 958.152, 10.4, 1040]);
	});
});
