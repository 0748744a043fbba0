import ExcelJS from 'exceljs';
import JSZip from 'jszip';
import { describe, expect, it } from 'vitest';
import {
	buildBidCsv,
	buildBidSheet,
	parseBidCsv,
	parseBidWorkbook,
	parseScreenPrices,
	type SheetEvent
} from './bid-sheet';
import { inspectUpload, UPLOAD_LIMITS } from './inspect';

const event = (overrides: Partial<SheetEvent> = {}): SheetEvent => ({
	reference: 'EV-2027-01',
	title: 'Test event',
	currency: 'EUR',
	bidValidityDays: 90,
	deadline: new Date('2027-03-01T12:00:00Z'),
	timeZone: 'Europe/Brussels',
	allowPriceBreaks: true,
	allowCapacity: true,
	allowBundles: true,
	items: [
		{ ref: 'IT-1', description: 'Case 300x200x150', lot: 'L1', unit: 'C62', quantity: 1200 },
		{ ref: 'IT-2', description: '=HYPERLINK("http://x")', lot: 'L1', unit: 'C62', quantity: 300 },
		{ ref: 'IT-3', description: 'Stretch film', lot: 'L2', unit: 'KGM', quantity: 50.5 }
	],
	...overrides
});

async function fill(bytes: Buffer, edit: (wb: ExcelJS.Workbook) => void): Promise<Buffer> {
	const workbook = new ExcelJS.Workbook();
	await workbook.xlsx.load(bytes as unknown as ArrayBuffer);
	edit(workbook);
	return Buffer.from(await workbook.xlsx.writeBuffer());
}

describe('the bid sheet', () => {
	it('locks the item columns, unlocks the price cells, validates them and protects the sheet', async () => {
		const workbook = new ExcelJS.Workbook();
		await workbook.xlsx.load((await buildBidSheet(event(), 'Supplier One')) as unknown as ArrayBuffer);
		expect(workbook.worksheets.map((s) => s.name)).toEqual([
			'Instructions',
			'Terms',
			'Prices',
			'Capacity',
			'Bundles'
		]);
		const prices = workbook.getWorksheet('Prices')!;
		expect(prices.getCell('A2').value).toBe('IT-1');
		expect(prices.getCell('A2').protection?.locked).not.toBe(false);
		expect(prices.getCell('F2').protection?.locked).toBe(false);
		expect(prices.getCell('G4').protection?.locked).toBe(false);
		expect((prices as unknown as { sheetProtection?: { sheet?: boolean } }).sheetProtection?.sheet).toBe(
			true
		);
		const validations = (
			prices as unknown as { dataValidations: { model: Record<string, { type: string }> } }
		).dataValidations.model;
		expect(Object.values(validations).every((v) => v.type === 'decimal')).toBe(true);
		expect(Object.keys(validations)).toEqual(expect.arrayContaining(['F2', 'F3', 'F4', 'G4', 'M4']));
		expect(Object.keys(validations)).not.toContain('A2');
		expect(workbook.getWorksheet('Terms')!.getCell('B3').value).toBe('EUR');
		expect(workbook.getWorksheet('Terms')!.getCell('B4').value).toBe(90);
	});

	// Brussels is on CET (+01:00) in March 2027, by the IANA rules: 12:00 UTC is 13:00 on its wall clock.
	it('states the deadline on the wall clock of the event’s time zone, as the event page does', async () => {
		const workbook = new ExcelJS.Workbook();
		await workbook.xlsx.load((await buildBidSheet(event(), 'Supplier One')) as unknown as ArrayBuffer);
		const texts: string[] = [];
		for (const sheet of ['Instructions', 'Terms'])
			workbook
				.getWorksheet(sheet)!
				.eachRow((row) => row.eachCell((cell) => void texts.push(String(cell.value))));
		const all = texts.join('\n');
		expect(all).toContain('2027-03-01 13:00 (Europe/Brussels)');
		expect(all).not.toContain('2027-03-01T12:00');
	});

	it('leaves out the break, capacity and bundle parts when the event does not allow them', async () => {
		const plain = event({ allowPriceBreaks: false, allowCapacity: false, allowBundles: false });
		const workbook = new ExcelJS.Workbook();
		await workbook.xlsx.load((await buildBidSheet(plain, 'S')) as unknown as ArrayBuffer);
		expect(workbook.worksheets.map((s) => s.name)).toEqual(['Instructions', 'Terms', 'Prices']);
		expect(workbook.getWorksheet('Prices')!.getRow(1).cellCount).toBe(6);
	});

	it('reads back exactly the numbers written, price breaks, capacity and bundles included', async () => {
		const filled = await fill(await buildBidSheet(event(), 'S'), (wb) => {
			const p = wb.getWorksheet('Prices')!;
			p.getCell('F2').value = 3.91;
			p.getCell('G2').value = 800;
			p.getCell('H2').value = 500;
			p.getCell('I2').value = 3.7;
			p.getCell('J2').value = 1000;
			p.getCell('K2').value = 3.55;
			p.getCell('F4').value = 0.125;
			wb.getWorksheet('Capacity')!.getCell('B1').value = 5000;
			const b = wb.getWorksheet('Bundles')!;
			b.addRow(['B1', 'IT-1', 1200, 9000.5]);
			b.addRow(['B1', 'IT-2', 300, null]);
		});
		const parsed = await parseBidWorkbook(event(), filled);
		expect(parsed).toEqual({
			ok: true,
			bid: {
				lines: [
					{
						item: 'IT-1',
						unitPrice: 3.91,
						maxQuantity: 800,
						priceBreaks: [
							{ fromQuantity: 500, unitPrice: 3.7 },
							{ fromQuantity: 1000, unitPrice: 3.55 }
						]
					},
					{ item: 'IT-3', unitPrice: 0.125, maxQuantity: null, priceBreaks: [] }
				],
				capacity: 5000,
				bundles: [
					{
						ref: 'B1',
						price: 9000.5,
						items: [
							{ item: 'IT-1', quantity: 1200 },
							{ item: 'IT-2', quantity: 300 }
						]
					}
				]
			}
		});
	});

	it('reports every planted error at once, by sheet, row and column', async () => {
		const filled = await fill(await buildBidSheet(event(), 'S'), (wb) => {
			const p = wb.getWorksheet('Prices')!;
			p.getCell('F2').value = 'cheap';
			p.getCell('F3').value = -2;
			p.getCell('F4').value = { formula: '1+1', result: 2 } as ExcelJS.CellFormulaValue;
			p.getCell('H4').value = 10;
			p.getCell('I4').value = 9;
			wb.getWorksheet('Bundles')!.addRow(['B1', 'IT-9', 5, 100]);
		});
		const parsed = await parseBidWorkbook(event(), filled);
		expect(parsed.ok).toBe(false);
		if (parsed.ok) return;
		expect(parsed.problems).toEqual([
			{ sheet: 'Prices', row: 2, column: 'F', message: '"cheap" is not a number' },
			{ sheet: 'Prices', row: 3, column: 'F', message: 'must not be negative' },
			{
				sheet: 'Prices',
				row: 4,
				column: 'F',
				message: 'a formula is not accepted here; type the number itself'
			},
			{ sheet: 'Prices', row: 4, column: 'H', message: 'a price break needs a unit price for the item' },
			{ sheet: 'Bundles', row: 2, column: 'B', message: '"IT-9" is not an item of this event' }
		]);
	});

	it('asks price breaks to rise in quantity and fall in price', async () => {
		const filled = await fill(await buildBidSheet(event(), 'S'), (wb) => {
			const p = wb.getWorksheet('Prices')!;
			p.getCell('F2').value = 4;
			p.getCell('H2').value = 500;
			p.getCell('I2').value = 4.2;
			p.getCell('J2').value = 400;
			p.getCell('K2').value = 3;
		});
		const parsed = await parseBidWorkbook(event(), filled);
		expect(parsed.ok ? [] : parsed.problems.map((p) => `${p.column}${p.row}: ${p.message}`)).toEqual([
			'I2: must be less than 4 (prices fall from break to break)',
			'J2: must be more than 500 (quantities rise from break to break)'
		]);
	});

	it('refuses a sheet whose layout was changed, naming the column', async () => {
		const filled = await fill(await buildBidSheet(event(), 'S'), (wb) => {
			wb.getWorksheet('Prices')!.getCell('F1').value = 'Price';
		});
		const parsed = await parseBidWorkbook(event(), filled);
		expect(parsed.ok ? null : parsed.problems[0]).toMatchObject({ sheet: 'Prices', row: 1, column: 'F' });
	});

	it('refuses a workbook without the Prices sheet', async () => {
		const workbook = new ExcelJS.Workbook();
		workbook.addWorksheet('Sheet1').getCell('A1').value = 'hello';
		const parsed = await parseBidWorkbook(event(), Buffer.from(await workbook.xlsx.writeBuffer()));
		expect(parsed.ok ? null : parsed.problems[0]!.message).toMatch(/no sheet named "Prices"/);
	});

	it('refuses a sheet with no prices at all', async () => {
		const parsed = await parseBidWorkbook(event(), await buildBidSheet(event(), 'S'));
		expect(parsed.ok ? null : parsed.problems[0]!.message).toMatch(/no prices/);
	});
});

describe('the CSV bid sheet', () => {
	it('neutralises cells that a spreadsheet would read as formulas', () => {
		const csv = buildBidCsv(event());
		expect(csv).toContain(`IT-2,"'=HYPERLINK(""http://x"")"`);
		expect(csv.split('\r\n')[0]).toBe(
			'Item ref,Description,Lot,Unit,Quantity,Unit price (EUR),Max quantity,Break 1 from quantity,Break 1 unit price,Break 2 from quantity,Break 2 unit price,Break 3 from quantity,Break 3 unit price'
		);
	});

	it('reads back the numbers written and treats = + - @ as text, never as formulas', () => {
		const [header] = buildBidCsv(event()).split('\r\n');
		const text = [
			header,
			'IT-1,x,L1,C62,1200,3.5,,,,,,,',
			'IT-2,x,L1,C62,300,=1+2,,,,,,,',
			'IT-3,x,L2,KGM,50.5,@SUM(A1),,,,,,,'
		].join('\n');
		const parsed = parseBidCsv(event(), text);
		expect(parsed.ok ? null : parsed.problems).toEqual([
			{ sheet: 'CSV', row: 3, column: 'F', message: '"=1+2" is not a number' },
			{ sheet: 'CSV', row: 4, column: 'F', message: '"@SUM(A1)" is not a number' }
		]);
		const good = parseBidCsv(event(), [header, 'IT-1,x,L1,C62,1200,3.5,100,,,,,,'].join('\n'));
		expect(good).toEqual({
			ok: true,
			bid: {
				lines: [{ item: 'IT-1', unitPrice: 3.5, maxQuantity: 100, priceBreaks: [] }],
				capacity: null,
				bundles: []
			}
		});
	});
});

describe('prices typed on screen', () => {
	it('says how to write a decimal comma, and names a number too large to hold, with the item’s row', () => {
		const parsed = parseScreenPrices(
			event(),
			[
				{ item: 'IT-1', cells: ['12,07'] },
				{ item: 'IT-2', cells: ['1e309'] },
				{ item: 'IT-3', cells: ['1,234,5'] }
			],
			null
		);
		expect(parsed.ok ? null : parsed.problems).toEqual([
			{
				sheet: 'On-screen prices',
				row: 2,
				column: 'F',
				message: '"12,07" is not a number: write the decimal mark as a point (12.07)'
			},
			// 1e309 is beyond the largest double (IEEE 754 binary64, about 1.8e308): it reads as Infinity.
			{ sheet: 'On-screen prices', row: 3, column: 'F', message: '"1e309" is too large to be a number' },
			{ sheet: 'On-screen prices', row: 4, column: 'F', message: '"1,234,5" is not a number' }
		]);
	});
});

describe('upload inspection by content', () => {
	it('accepts a real .xlsx and a .csv', async () => {
		expect((await inspectUpload(await buildBidSheet(event(), 'S'), 'bid.xlsx')).ok).toBe(true);
		expect(await inspectUpload(Buffer.from('\uFEFFItem ref,Description\r\n'), 'bid.csv')).toMatchObject({
			ok: true,
			kind: 'csv'
		});
	});

	it('refuses an oversized file with its size and the limit', async () => {
		const result = await inspectUpload(Buffer.alloc(UPLOAD_LIMITS.bytes + 1, 65), 'bid.csv');
		expect(result).toEqual({ ok: false, message: 'The file is 5.0 MB; the limit is 5.0 MB.' });
	});

	// Deflating 50 MB for the test takes seconds on a busy machine.
	it(
		'refuses a zip bomb disguised as .xlsx before any spreadsheet parsing',
		{ timeout: 30_000 },
		async () => {
			const zip = new JSZip();
			zip.file('[Content_Types].xml', '<Types/>');
			zip.file('xl/workbook.xml', '<workbook/>');
			zip.file('xl/worksheets/sheet1.xml', Buffer.alloc(UPLOAD_LIMITS.uncompressedBytes + 1024, 32));
			const bomb = await zip.generateAsync({
				type: 'nodebuffer',
				compression: 'DEFLATE',
				compressionOptions: { level: 9 }
			});
			expect(bomb.length).toBeLessThan(UPLOAD_LIMITS.bytes);
			const result = await inspectUpload(bomb, 'bid.xlsx');
			expect(result.ok).toBe(false);
			expect(result.ok ? '' : result.message).toMatch(/expands to more than 50.0 MB/);
		}
	);

	it('refuses a macro-enabled workbook renamed .xlsx', async () => {
		const zip = new JSZip();
		zip.file(
			'[Content_Types].xml',
			'<Types><Override ContentType="application/vnd.ms-excel.sheet.macroEnabled.main+xml"/></Types>'
		);
		zip.file('xl/workbook.xml', '<workbook/>');
		zip.file('xl/vbaProject.bin', Buffer.from([1, 2, 3]));
		const result = await inspectUpload(await zip.generateAsync({ type: 'nodebuffer' }), 'bid.xlsx');
		expect(result.ok ? '' : result.message).toMatch(/contains macros/);
	});

	it('refuses old .xls files, .xlsm names and binary files', async () => {
		const ole = Buffer.from([0xd0, 0xcf, 0x11, 0xe0, 0xa1, 0xb1, 0x1a, 0xe1, 0, 0]);
		expect(await inspectUpload(ole, 'bid.xlsx')).toMatchObject({
			ok: false,
			message: expect.stringMatching(/old-format Excel/)
		});
		expect(await inspectUpload(Buffer.from('a,b'), 'bid.xlsm')).toMatchObject({
			ok: false,
			message: expect.stringMatching(/Macro-enabled/)
		});
		expect(await inspectUpload(Buffer.from([0x89, 0x50, 0x4e, 0x47, 0, 1]), 'bid.xlsx')).toMatchObject({
			ok: false
		});
	});
});

describe('pack sizes in the bid sheet', () => {
	const packs = event({ allowPriceBreaks: false, allowBundles: false, allowPackSizes: true });
	const header = 'Item ref,Description,Lot,Unit,Quantity,Unit price (EUR),Max quantity,Pack size';

	it('adds a Pack size column after the maximum quantity and reads it back', () => {
		expect(buildBidCsv(packs).split('\r\n')[0]).toBe(header);
		const parsed = parseBidCsv(
			packs,
			[header, 'IT-1,x,L1,C62,1200,3.5,,12', 'IT-3,x,L2,KGM,50.5,2,,0.5'].join('\n')
		);
		expect(parsed.ok && parsed.bid.lines.map((l) => [l.item, l.packSize])).toEqual([
			['IT-1', 12],
			['IT-3', 0.5]
		]);
	});

	it('names a pack in parts of a counted unit, a maximum under one pack and a pack without a price', () => {
		const parsed = parseBidCsv(
			packs,
			[header, 'IT-1,x,L1,C62,1200,3.5,,2.5', 'IT-2,x,L1,C62,300,1,10,12', 'IT-3,x,L2,KGM,50.5,,,5'].join(
				'\n'
			)
		);
		expect(parsed.ok ? [] : parsed.problems.map((p) => `${p.row}${p.column} ${p.message}`)).toEqual([
			'2H 2.5 is not a whole number, and C62 is counted in whole units',
			'3G a maximum quantity of 10 is less than one pack of 12',
			'4H a pack size needs a unit price for the item'
		]);
	});

	it('lists the items ordered in multiples in the instructions', async () => {
		const ordered = event({
			items: [
				{ ref: 'IT-1', description: 'Case', lot: 'L1', unit: 'C62', quantity: 1200, orderMultiple: 4 },
				{ ref: 'IT-2', description: 'Film', lot: 'L1', unit: 'KGM', quantity: 30 }
			]
		});
		const workbook = new ExcelJS.Workbook();
		await workbook.xlsx.load((await buildBidSheet(ordered, 'S')) as unknown as ArrayBuffer);
		const lines: string[] = [];
		workbook.getWorksheet('Instructions')!.eachRow((row) => lines.push(String(row.getCell(1).value)));
		expect(lines).toContain('Items ordered in multiples are awarded in whole multiples: IT-1 in 4s.');
	});
});

describe('numbers the database cannot hold', () => {
	it('refuses a price, quantity or pack size of 10^14 or more, naming the cell, instead of failing to store it', () => {
		const packs = event({ allowPriceBreaks: false, allowBundles: false, allowPackSizes: true });
		const header = 'Item ref,Description,Lot,Unit,Quantity,Unit price (EUR),Max quantity,Pack size';
		const parsed = parseBidCsv(packs, [header, 'IT-1,x,L1,C62,1200,1e15,2e14,1e14'].join('\n'));
		expect(parsed.ok ? [] : parsed.problems.map((p) => `${p.row}${p.column} ${p.message}`)).toEqual([
			'2F must be less than 100,000,000,000,000',
			'2G must be less than 100,000,000,000,000',
			'2H must be less than 100,000,000,000,000'
		]);
	});
});
