// What an uploaded bid file is, decided by its bytes (never by its name or Content-Type), with the
// limits checked before any spreadsheet parsing (OWASP File Upload Cheat Sheet; ASVS V5.2, V5.3):
// .xlsx and .csv only, no macro-enabled or old binary formats, capped size, entry count and
// uncompressed size. Entries are inflated here under a running cap, so a zip whose headers lie about
// its sizes is stopped too. The shape of every worksheet (rows, columns) and the line count of a CSV
// are checked here too: a spreadsheet library allocates a row for every row number up to the last one,
// so a 10 KB workbook with one cell in row 1,048,576 costs gigabytes once parsed.
import type { Readable } from 'node:stream';
import JSZip from 'jszip';
import { formatQuantity } from '../../format';

export const UPLOAD_LIMITS = {
	bytes: 5 * 1024 * 1024,
	entries: 200,
	uncompressedBytes: 50 * 1024 * 1024
};

/** The most rows and columns a sheet of the upload may use. */
export interface SheetShape {
	rows: number;
	columns: number;
}

// The hard ceiling: the largest event (20,000 items, item-import.ts) with its header and the margin
// below. A bid sheet uses 13 columns at most; an item list fewer.
const ROW_MARGIN = 1_000;
export const HARD_SHAPE: SheetShape = { rows: 20_000 + 1 + ROW_MARGIN, columns: 64 };

/** What a bid sheet for an event of `items` items can need: a header, the items and room for bundles. */
export function bidSheetShape(items: number): SheetShape {
	return { rows: Math.min(HARD_SHAPE.rows, items + 1 + ROW_MARGIN), columns: HARD_SHAPE.columns };
}

export type Inspection =
	| { ok: true; kind: 'xlsx'; bytes: Buffer }
	| { ok: true; kind: 'csv'; text: string }
	| { ok: false; message: string };

const count = formatQuantity;
const SAVE_AS_CSV =
	'To fix it: open the file in your spreadsheet program, choose "Save as", pick "CSV UTF-8 (comma delimited)" as the type, and upload the new file.';

const megabytes = (n: number) => `${(n / 1024 / 1024).toFixed(1)} MB`;

const tooLarge = {
	ok: false as const,
	message: `The workbook expands to more than ${megabytes(UPLOAD_LIMITS.uncompressedBytes)} when unpacked; a bid sheet is far smaller. It was not opened.`
};

const unreadableZip = {
	ok: false as const,
	message: 'The file looks like a zip archive but cannot be read. Save the bid sheet as .xlsx again.'
};

const macros = {
	ok: false as const,
	message:
		'The workbook contains macros (.xlsm saved as .xlsx). Save the bid sheet as a plain .xlsx without macros.'
};

function startsWith(bytes: Buffer, signature: number[]): boolean {
	return signature.every((b, i) => bytes[i] === b);
}

/** 1-based column number of a cell reference's letters: A → 1, XFD → 16384. */
function columnNumber(letters: string): number {
	let n = 0;
	for (const ch of letters.toUpperCase()) n = n * 26 + (ch.charCodeAt(0) - 64);
	return n;
}

/** The last row and column of a worksheet's XML, as a spreadsheet library would place its cells. */
export class WorksheetScan {
	lastRow = 0;
	lastColumn = 0;
	dimension: { rows: number; columns: number } | null = null;
	private row = 0;
	private column = 0;
	private carry = '';

	// Tags may carry a namespace prefix (<x:row>); a row or cell without r follows the previous one.
	private static readonly tag = /<(?:[A-Za-z_][\w.-]*:)?(row|c|dimension)\b([^>]*)>/g;
	private static readonly reference =
		/\b(?:r|ref)\s*=\s*["']\$?([A-Za-z]*)\$?(\d*)(?::\$?([A-Za-z]*)\$?(\d*))?["']/;

	/** Feeds the next piece of the XML (latin1 is enough: tags and references are ASCII). */
	push(chunk: string): void {
		let text = this.carry + chunk;
		const open = text.lastIndexOf('<');
		if (open >= 0 && text.indexOf('>', open) < 0) {
			this.carry = text.slice(open);
			text = text.slice(0, open);
		} else this.carry = '';
		// A tag longer than this is no worksheet markup; keep the carry from growing without bound.
		if (this.carry.length > 1024 * 1024) this.carry = '';
		for (const match of text.matchAll(WorksheetScan.tag)) {
			const ref = WorksheetScan.reference.exec(match[2]!);
			if (match[1] === 'dimension') {
				if (ref) {
					this.dimension = {
						rows: Number(ref[4] || ref[2] || 0),
						columns: columnNumber(ref[3] || ref[1] || '')
					};
				}
			} else if (match[1] === 'row') {
				this.row = ref?.[2] ? Number(ref[2]) : this.row + 1;
				this.column = 0;
				this.lastRow = Math.max(this.lastRow, this.row);
			} else {
				this.column = ref?.[1] ? columnNumber(ref[1]) : this.column + 1;
				if (ref?.[2]) this.lastRow = Math.max(this.lastRow, Number(ref[2]));
				this.lastColumn = Math.max(this.lastColumn, this.column);
			}
		}
	}

	/** The extent to check: the larger of what the file claims and what it holds. */
	extent(): { rows: number; columns: number } {
		return {
			rows: Math.max(this.lastRow, this.dimension?.rows ?? 0),
			columns: Math.max(this.lastColumn, this.dimension?.columns ?? 0)
		};
	}
}

/** Inflates one entry while counting (and scanning, for a worksheet); stops once the budget is spent. */
async function inflate(file: JSZip.JSZipObject, budget: number, scan?: WorksheetScan): Promise<number> {
	return new Promise((resolve, reject) => {
		let total = 0;
		const stream = file.nodeStream('nodebuffer') as Readable;
		stream.on('data', (chunk: Buffer) => {
			total += chunk.length;
			if (total > budget) {
				stream.pause();
				stream.removeAllListeners('data');
				resolve(total);
				return;
			}
			scan?.push(chunk.toString('latin1'));
		});
		stream.on('error', reject);
		stream.on('end', () => resolve(total));
	});
}

const decodeXml = (text: string) =>
	text.replace(
		/&(amp|lt|gt|quot|apos);/g,
		(_, name: string) => ({ amp: '&', lt: '<', gt: '>', quot: '"', apos: "'" })[name]!
	);
const attribute = (tag: string, name: string) =>
	new RegExp(`\\s${name}\\s*=\\s*(?:"([^"]*)"|'([^']*)')`)
		.exec(tag)
		?.slice(1)
		.find((v) => v !== undefined);

/** Worksheet part name → sheet name, from xl/workbook.xml and its relationships. */
async function sheetNames(zip: JSZip): Promise<Map<string, string>> {
	const names = new Map<string, string>();
	const workbook = await zip.file('xl/workbook.xml')?.async('string');
	const rels = await zip.file('xl/_rels/workbook.xml.rels')?.async('string');
	if (!workbook || !rels) return names;
	const targets = new Map<string, string>();
	for (const [tag] of rels.matchAll(/<(?:\w+:)?Relationship\b[^>]*>/g)) {
		const id = attribute(tag, 'Id');
		const target = attribute(tag, 'Target');
		if (id && target) targets.set(id, target.replace(/^\/?(xl\/)?/, 'xl/'));
	}
	for (const [tag] of workbook.matchAll(/<(?:\w+:)?sheet\b[^>]*>/g)) {
		const name = attribute(tag, 'name');
		const target = targets.get(attribute(tag, '(?:\\w+:)?id') ?? '');
		if (name && target) names.set(target, decodeXml(name));
	}
	return names;
}

function csvShapeProblem(bytes: Buffer, shape: SheetShape): string | null {
	let lines = 0;
	for (let at = bytes.indexOf(10); at >= 0; at = bytes.indexOf(10, at + 1)) lines++;
	if (bytes.length && bytes[bytes.length - 1] !== 10) lines++;
	if (lines <= shape.rows) return null;
	return `The file has ${count(lines)} lines; a bid sheet for this event has at most ${count(shape.rows)} (a header, one line per item and room to spare). It was not read. Upload the bid sheet downloaded for this event with one line per item.`;
}

function csvLayoutProblem(text: string): string | null {
	const header = text.slice(0, text.search(/\r?\n|$/));
	if (header.includes(',')) return null;
	const separator = header.includes(';') ? 'semicolons' : header.includes('\t') ? 'tabs' : null;
	if (!separator) return null;
	return `The CSV file is separated by ${separator}, not commas, so its columns cannot be told apart reliably (a decimal comma looks like a separator). ${SAVE_AS_CSV} Or upload the .xlsx bid sheet.`;
}

export async function inspectUpload(
	bytes: Buffer,
	fileName: string,
	shape: SheetShape = HARD_SHAPE
): Promise<Inspection> {
	const extension = /\.([a-z0-9]+)$/i.exec(fileName)?.[1]?.toLowerCase() ?? '';
	if (['xlsm', 'xltm', 'xlam', 'xlsb'].includes(extension)) {
		return {
			ok: false,
			message: `Macro-enabled and binary workbooks (.${extension}) are not accepted. Save the bid sheet as .xlsx.`
		};
	}
	if (bytes.length === 0) return { ok: false, message: 'The file is empty.' };
	if (bytes.length > UPLOAD_LIMITS.bytes) {
		return {
			ok: false,
			message: `The file is ${megabytes(bytes.length)}; the limit is ${megabytes(UPLOAD_LIMITS.bytes)}.`
		};
	}
	if (startsWith(bytes, [0xd0, 0xcf, 0x11, 0xe0, 0xa1, 0xb1, 0x1a, 0xe1])) {
		return {
			ok: false,
			message: 'This is an old-format Excel file (.xls). Save the bid sheet as .xlsx and upload it again.'
		};
	}
	if (startsWith(bytes, [0x25, 0x50, 0x44, 0x46, 0x2d])) {
		return {
			ok: false,
			message:
				'This is a PDF document, not a bid sheet. Upload the bid sheet downloaded for this event, filled in, as .xlsx or as CSV UTF-8 (comma delimited).'
		};
	}
	if (startsWith(bytes, [0x50, 0x4b, 0x03, 0x04])) {
		let zip: JSZip;
		try {
			zip = await JSZip.loadAsync(bytes, { checkCRC32: false });
		} catch {
			return unreadableZip;
		}
		const files = Object.values(zip.files).filter((f) => !f.dir);
		if (files.length > UPLOAD_LIMITS.entries) {
			return {
				ok: false,
				message: `The workbook has ${files.length} parts; a bid sheet has far fewer (limit ${UPLOAD_LIMITS.entries}).`
			};
		}
		const names = new Set(files.map((f) => f.name));
		if (!names.has('[Content_Types].xml') || !names.has('xl/workbook.xml')) {
			return { ok: false, message: 'The file is a zip archive but not an Excel workbook (.xlsx).' };
		}
		if (names.has('xl/vbaProject.bin')) return macros;
		// What the zip's headers declare: enough to refuse an honest bomb without inflating it. They can lie,
		// so every entry is still inflated under the running cap below.
		const declared = files.reduce(
			(sum, f) =>
				sum + ((f as unknown as { _data?: { uncompressedSize?: number } })._data?.uncompressedSize ?? 0),
			0
		);
		if (declared > UPLOAD_LIMITS.uncompressedBytes) return tooLarge;
		let total = 0;
		const scans = new Map<string, WorksheetScan>();
		let contentTypes: string;
		try {
			for (const file of files) {
				// The spreadsheet library takes every part named like xl/worksheets/sheetN.xml for a sheet.
				const scan = /worksheets\/[^/]*\.xml$/i.test(file.name) ? new WorksheetScan() : undefined;
				if (scan) scans.set(file.name, scan);
				total += await inflate(file, UPLOAD_LIMITS.uncompressedBytes - total, scan);
				if (total > UPLOAD_LIMITS.uncompressedBytes) return tooLarge;
			}
			contentTypes = await zip.file('[Content_Types].xml')!.async('string');
		} catch {
			// A damaged entry, or one whose size differs from what its header says.
			return unreadableZip;
		}
		if (/macroEnabled/i.test(contentTypes)) return macros;
		const sheets = await sheetNames(zip);
		for (const [part, scan] of scans) {
			const { rows, columns } = scan.extent();
			if (rows <= shape.rows && columns <= shape.columns) continue;
			const sheet = sheets.get(part) ?? part;
			return {
				ok: false,
				message:
					rows > shape.rows
						? `The sheet "${sheet}" reaches row ${count(rows)}; a bid sheet for this event has at most ${count(shape.rows)} rows. It was not opened. Delete the rows below your prices (or copy your prices into a freshly downloaded bid sheet) and upload again.`
						: `The sheet "${sheet}" reaches column ${count(columns)}; a bid sheet has at most ${count(shape.columns)} columns. It was not opened. Delete the columns right of the price columns (or copy your prices into a freshly downloaded bid sheet) and upload again.`
			};
		}
		return { ok: true, kind: 'xlsx', bytes };
	}
	if (startsWith(bytes, [0xff, 0xfe]) || startsWith(bytes, [0xfe, 0xff]) || utf16Pattern(bytes)) {
		return {
			ok: false,
			message: `The CSV file is saved as Unicode (UTF-16) text, which cannot be read as a bid sheet. ${SAVE_AS_CSV}`
		};
	}
	if (bytes.includes(0))
		return { ok: false, message: 'The file is neither an .xlsx workbook nor a .csv text file.' };
	const tooLong = csvShapeProblem(bytes, shape);
	if (tooLong) return { ok: false, message: tooLong };
	const text = new TextDecoder('utf-8', { fatal: false }).decode(bytes).replace(/^\uFEFF/, '');
	const layout = csvLayoutProblem(text);
	if (layout) return { ok: false, message: layout };
	return { ok: true, kind: 'csv', text };
}

/** UTF-16 text without a byte-order mark: ASCII characters with a zero byte beside each. */
function utf16Pattern(bytes: Buffer): boolean {
	const sample = bytes.subarray(0, 512);
	if (sample.length < 4) return false;
	let evenZeros = 0;
	let oddZeros = 0;
	for (let i = 0; i < sample.length; i++) {
		if (sample[i] !== 0) continue;
		if (i % 2) oddZeros++;
		else evenZeros++;
	}
	const half = sample.length / 2;
	return evenZeros > half * 0.8 || oddZeros > half * 0.8;
}
