import ExcelJS from 'exceljs';
import { describe, expect, it } from 'vitest';
import { buildBidCsv, buildBidSheet, type SheetEvent } from './bid-sheet';
import { parseThreadCount, readBidFile, readItemFile } from './read-bid-file';

const event: SheetEvent = {
	reference: 'EV-1',
	title: 'Test',
	currency: 'EUR',
	bidValidityDays: 90,
	deadline: new Date('2027-03-01T12:00:00Z'),
	timeZone: 'Europe/Brussels',
	allowPriceBreaks: false,
	allowCapacity: false,
	allowBundles: false,
	items: [
		{ ref: 'IT-1', description: 'Case', lot: null, unit: 'C62', quantity: 10 },
		{ ref: 'IT-2', description: 'Film', lot: null, unit: 'KGM', quantity: 5 }
	]
};

const filledCsv = () =>
	Buffer.from(
		buildBidCsv(event)
			.trim()
			.split('\r\n')
			.map((line, k) => (k === 0 ? line : `${line},${k * 2.5}`))
			.join('\r\n')
	);

// Each test starts a thread that loads tsx and the spreadsheet library: seconds on a busy machine.
describe('reading a bid file on a worker thread', { timeout: 30_000 }, () => {
	it('reads a filled CSV into bid lines', async () => {
		const reading = await readBidFile(event, { name: 'bid.csv', bytes: filledCsv() });
		expect(reading.kind).toBe('csv');
		expect(reading.outcome).toEqual({
			ok: true,
			bid: {
				lines: [
					{ item: 'IT-1', unitPrice: 2.5, maxQuantity: null, priceBreaks: [] },
					{ item: 'IT-2', unitPrice: 5, maxQuantity: null, priceBreaks: [] }
				],
				capacity: null,
				bundles: []
			}
		});
	});

	it('returns the inspection refusal as the only problem', async () => {
		const reading = await readBidFile(event, { name: 'bid.xlsx', bytes: Buffer.from('%PDF-1.4\n') });
		expect(reading).toEqual({
			kind: null,
			outcome: {
				ok: false,
				problems: [expect.objectContaining({ sheet: '(file)', message: expect.stringMatching(/PDF/) })]
			}
		});
	});

	it('gives up on a file not read within the time limit, saying so', async () => {
		const reading = await readBidFile(event, { name: 'bid.csv', bytes: filledCsv() }, { timeoutMs: 1 });
		expect(reading.outcome.ok ? '' : reading.outcome.problems[0]!.message).toMatch(
			/^The file could not be read in time/
		);
	});

	it('stops a thread that runs out of its memory cap, saying so', async () => {
		const big: SheetEvent = {
			...event,
			items: Array.from({ length: 1_000 }, (_, k) => ({
				ref: `IT-${k}`,
				description: 'Case',
				lot: null,
				unit: 'C62',
				quantity: 5
			}))
		};
		const sheet = await buildBidSheet(big, 'S');
		const reading = await readBidFile(big, { name: 'bid.xlsx', bytes: sheet }, { heapMb: 8 });
		expect(reading.outcome.ok ? '' : reading.outcome.problems[0]!.message).toMatch(
			/^The file needs more memory to read than a bid sheet may use \(8 MB\)/
		);
	});

	it('reads one file after another on the kept threads; a file under another time limit gets its own', async () => {
		const ok = (reading: Awaited<ReturnType<typeof readBidFile>>) => reading.outcome.ok;
		expect(ok(await readBidFile(event, { name: 'bid.csv', bytes: filledCsv() }))).toBe(true);
		const started = parseThreadCount.started;
		for (let k = 0; k < 4; k++)
			expect(ok(await readBidFile(event, { name: 'bid.csv', bytes: filledCsv() }))).toBe(true);
		// Before the pool, every file started a thread of its own.
		expect(parseThreadCount.started).toBe(started);
		const late = await readBidFile(event, { name: 'bid.csv', bytes: filledCsv() }, { timeoutMs: 1 });
		expect(late.outcome.ok).toBe(false);
		// That file's thread was stopped; the next file is read whole on a kept thread.
		const next = await readBidFile(event, { name: 'bid.csv', bytes: filledCsv() });
		expect(next.outcome.ok && next.outcome.bid.lines.map((l) => l.item)).toEqual(['IT-1', 'IT-2']);
	});
});

describe('reading an item list on a thread', () => {
	const itemWorkbook = async (rows: number) => {
		const workbook = new ExcelJS.Workbook();
		const sheet = workbook.addWorksheet('Items');
		sheet.addRow(['Ref', 'Description', 'Lot', 'Quantity', 'Unit']);
		for (let k = 1; k <= rows; k++) sheet.addRow([`R-${k}`, `Item ${k}`, 'L1', k, 'C62']);
		return Buffer.from(await workbook.xlsx.writeBuffer());
	};

	it('reads the items of a workbook, and names every bad row of a CSV', async () => {
		const read = await readItemFile({ name: 'items.xlsx', bytes: await itemWorkbook(3) });
		expect(read.ok && read.items.map((i) => [i.ref, i.quantity])).toEqual([
			['R-1', 1],
			['R-2', 2],
			['R-3', 3]
		]);
		const bad = await readItemFile({
			name: 'items.csv',
			bytes: Buffer.from('Ref,Description,Lot,Quantity,Unit\r\nA-1,Bolts,L1,ten,C62\r\n')
		});
		expect(bad.ok ? [] : bad.problems.map((p) => `${p.row}${p.column}: ${p.message}`)).toEqual([
			'2D: "ten" is not a number'
		]);
	});

	it('stops a thread that runs out of its memory cap, and refuses a file by its content first', async () => {
		const capped = await readItemFile(
			{ name: 'items.xlsx', bytes: await itemWorkbook(5_000) },
			{ heapMb: 8 }
		);
		expect(capped.ok ? '' : capped.problems[0]!.message).toMatch(
			/^The file needs more memory to read than an item list may use \(8 MB\)\. Save the item list as \.xlsx/
		);
		const pdf = await readItemFile({ name: 'items.xlsx', bytes: Buffer.from('%PDF-1.7\n') });
		expect(pdf.ok ? '' : pdf.problems[0]!.message).toMatch(/PDF/);
	});
});
