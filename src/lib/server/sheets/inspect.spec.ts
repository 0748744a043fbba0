import JSZip from 'jszip';
import { describe, expect, it } from 'vitest';
import { buildBidSheet, type SheetEvent } from './bid-sheet';
import { bidSheetShape, HARD_SHAPE, inspectUpload, WorksheetScan } from './inspect';

const scan = (...chunks: string[]) => {
	const found = new WorksheetScan();
	for (const chunk of chunks) found.push(chunk);
	return found.extent();
};

describe('the worksheet scan', () => {
	it('finds the last row and column from row and cell references', () => {
		expect(
			scan('<sheetData><row r="1"><c r="A1"/><c r="M1"/></row><row r="7"><c r="B7"/></row></sheetData>')
		).toEqual({ rows: 7, columns: 13 });
	});

	it('believes the larger of the dimension element and the cells, since the dimension can lie', () => {
		expect(scan('<dimension ref="A1:F4"/><row r="1048576"><c r="A1048576"/></row>')).toEqual({
			rows: 1_048_576,
			columns: 6
		});
		expect(scan('<dimension ref="A1:XFD1048576"/><row r="1"><c r="A1"/></row>')).toEqual({
			rows: 1_048_576,
			columns: 16_384
		});
	});

	it('counts rows and cells without a reference after the previous one, as a spreadsheet reader does', () => {
		expect(scan('<row r="5"><c/><c/><c/></row><row/><row><c r="D8"/></row>')).toEqual({
			rows: 8,
			columns: 4
		});
	});

	it('finds a reference split between two pieces of the inflated text, with a namespace prefix', () => {
		expect(scan('<x:row r="10"><x:c r="A10"/></x:row><x:row r="20', '0000"><x:c r="AB200000"/>')).toEqual({
			rows: 200_000,
			columns: 28
		});
	});

	it('does not take <cols> or <col> for cells', () => {
		expect(scan('<cols><col min="1" max="16384"/></cols><row r="1"><c r="A1"/></row>')).toEqual({
			rows: 1,
			columns: 1
		});
	});
});

const event: SheetEvent = {
	reference: 'EV-1',
	title: 'Test',
	currency: 'EUR',
	bidValidityDays: 90,
	deadline: new Date('2027-03-01T12:00:00Z'),
	timeZone: 'Europe/Brussels',
	allowPriceBreaks: true,
	allowCapacity: true,
	allowBundles: true,
	items: [{ ref: 'IT-1', description: 'Case', lot: null, unit: 'C62', quantity: 10 }]
};

async function withSheetXml(sheetXml: string): Promise<Buffer> {
	const zip = await JSZip.loadAsync(await buildBidSheet(event, 'S'));
	const part = Object.keys(zip.files).find((name) => /worksheets\/sheet3\.xml$/.test(name))!;
	zip.file(part, sheetXml);
	return zip.generateAsync({ type: 'nodebuffer', compression: 'DEFLATE' });
}

describe('sheet shape before parsing', () => {
	it('allows a bid sheet the items, a header and a margin, under a hard ceiling', () => {
		expect(bidSheetShape(3).rows).toBe(1_004);
		expect(bidSheetShape(1_000_000).rows).toBe(HARD_SHAPE.rows);
	});

	it('accepts the bid sheet as downloaded', async () => {
		expect(await inspectUpload(await buildBidSheet(event, 'S'), 'bid.xlsx', bidSheetShape(1))).toMatchObject({
			ok: true
		});
	});

	it('refuses a sheet with a cell far below the items, naming the sheet and the row', async () => {
		const far = await withSheetXml(
			'<worksheet><sheetData><row r="1048576"><c r="A1048576"/></row></sheetData></worksheet>'
		);
		const result = await inspectUpload(far, 'bid.xlsx', bidSheetShape(1));
		expect(result.ok ? '' : result.message).toMatch(
			/^The sheet "Prices" reaches row 1,048,576; a bid sheet for this event has at most 1,002 rows\./
		);
	});

	it('refuses a sheet with a cell far right of the price columns', async () => {
		const wide = await withSheetXml(
			'<worksheet><sheetData><row r="2"><c r="XFD2"/></row></sheetData></worksheet>'
		);
		const result = await inspectUpload(wide, 'bid.xlsx', bidSheetShape(1));
		expect(result.ok ? '' : result.message).toMatch(/^The sheet "Prices" reaches column 16,384;/);
	});

	it('refuses a CSV with more lines than the event can need, before reading it', async () => {
		const csv = Buffer.from(['Item ref', ...Array.from({ length: 1_003 }, () => 'x')].join('\n'));
		expect(await inspectUpload(csv, 'bid.csv', bidSheetShape(1))).toEqual({
			ok: false,
			message: expect.stringMatching(
				/^The file has 1,004 lines; a bid sheet for this event has at most 1,002 /
			)
		});
		expect((await inspectUpload(csv, 'bid.csv', bidSheetShape(3))).ok).toBe(true);
	});
});

describe('files that are not a comma-separated UTF-8 CSV', () => {
	const saveAs = /"Save as", pick "CSV UTF-8 \(comma delimited\)"/;

	it('refuses UTF-16 text with or without a byte-order mark, saying how to save it', async () => {
		const text = 'Item ref,Description\r\nIT-1,Case\r\n';
		for (const bytes of [
			Buffer.concat([Buffer.from([0xff, 0xfe]), Buffer.from(text, 'utf16le')]),
			Buffer.from(text, 'utf16le')
		]) {
			const result = await inspectUpload(bytes, 'bid.csv');
			expect(result.ok ? '' : result.message).toMatch(/Unicode \(UTF-16\)/);
			expect(result.ok ? '' : result.message).toMatch(saveAs);
		}
	});

	it('refuses a semicolon-separated CSV, saying how to save it', async () => {
		const result = await inspectUpload(Buffer.from('Item ref;Description\r\nIT-1;Case;3,5\r\n'), 'bid.csv');
		expect(result.ok ? '' : result.message).toMatch(/separated by semicolons/);
		expect(result.ok ? '' : result.message).toMatch(saveAs);
	});

	it('refuses a PDF whatever its name', async () => {
		for (const name of ['bid.xlsx', 'bid.csv']) {
			const result = await inspectUpload(Buffer.from('%PDF-1.4\n1 0 obj << >> endobj\n%%EOF'), name);
			expect(result.ok ? '' : result.message).toMatch(/^This is a PDF document, not a bid sheet\./);
		}
	});

	it('refuses a macro workbook named .xlsx by its content type alone', async () => {
		const zip = await JSZip.loadAsync(await buildBidSheet(event, 'S'));
		const types = await zip.file('[Content_Types].xml')!.async('string');
		zip.file('[Content_Types].xml', types.replace('sheet.main+xml', 'sheet.macroEnabled.main+xml'));
		const result = await inspectUpload(await zip.generateAsync({ type: 'nodebuffer' }), 'bid.xlsx');
		expect(result.ok ? '' : result.message).toMatch(/contains macros/);
	});
});

describe('a zip bomb', () => {
	/** Sets the declared uncompressed size of entries of `actual` bytes (local and central headers) to `size`. */
	function lieAboutSizes(zip: Buffer, actual: number, size: number): Buffer {
		const out = Buffer.from(zip);
		for (let at = 0; at < out.length - 30; at++) {
			const signature = out.readUInt32LE(at);
			if (signature === 0x04034b50 && out.readUInt32LE(at + 22) === actual) out.writeUInt32LE(size, at + 22);
			if (signature === 0x02014b50 && out.readUInt32LE(at + 24) === actual) out.writeUInt32LE(size, at + 24);
		}
		return out;
	}

	it(
		'is refused while inflating even when its headers declare small entries',
		{ timeout: 30_000 },
		async () => {
			const zip = new JSZip();
			zip.file('[Content_Types].xml', '<Types/>');
			zip.file('xl/workbook.xml', '<workbook/>');
			zip.file('xl/worksheets/sheet1.xml', Buffer.alloc(60 * 1024 * 1024, 32));
			const honest = await zip.generateAsync({ type: 'nodebuffer', compression: 'DEFLATE' });
			const result = await inspectUpload(lieAboutSizes(honest, 60 * 1024 * 1024, 1000), 'bid.xlsx');
			expect(result.ok ? '' : result.message).toMatch(/expands to more than 50\.0 MB when unpacked/);
		}
	);
});
