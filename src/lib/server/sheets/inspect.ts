// What an uploaded bid file is, decided by its bytes (never by its name or Content-Type), with the
// limits checked before any spreadsheet parsing (OWASP File Upload Cheat Sheet; ASVS V5.2, V5.3):
// .xlsx and .csv only, no macro-enabled or old binary formats, capped size, entry count and
// uncompressed size. Entries are inflated here under a running cap, so a zip whose headers lie about
// its sizes is stopped too.
import type { Readable } from 'node:stream';
import JSZip from 'jszip';

export const UPLOAD_LIMITS = {
	bytes: 5 * 1024 * 1024,
	entries: 200,
	uncompressedBytes: 50 * 1024 * 1024
};

export type Inspection =
	| { ok: true; kind: 'xlsx'; bytes: Buffer }
	| { ok: true; kind: 'csv'; text: string }
	| { ok: false; message: string };

const megabytes = (n: number) => `${(n / 1024 / 1024).toFixed(1)} MB`;

function startsWith(bytes: Buffer, signature: number[]): boolean {
	return signature.every((b, i) => bytes[i] === b);
}

/** Inflates one entry while counting, and stops as soon as the budget is spent. */
async function inflatedSize(file: JSZip.JSZipObject, budget: number): Promise<number> {
	return new Promise((resolve, reject) => {
		let total = 0;
		const stream = file.nodeStream('nodebuffer') as Readable;
		stream.on('data', (chunk: Buffer) => {
			total += chunk.length;
			if (total > budget) {
				stream.pause();
				stream.removeAllListeners('data');
				resolve(total);
			}
		});
		stream.on('error', reject);
		stream.on('end', () => resolve(total));
	});
}

export async function inspectUpload(bytes: Buffer, fileName: string): Promise<Inspection> {
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
	if (startsWith(bytes, [0x50, 0x4b, 0x03, 0x04])) {
		let zip: JSZip;
		try {
			zip = await JSZip.loadAsync(bytes, { checkCRC32: false });
		} catch {
			return {
				ok: false,
				message: 'The file looks like a zip archive but cannot be read. Save the bid sheet as .xlsx again.'
			};
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
		const contentTypes = await zip.file('[Content_Types].xml')!.async('string');
		if (names.has('xl/vbaProject.bin') || /macroEnabled/i.test(contentTypes)) {
			return {
				ok: false,
				message:
					'The workbook contains macros (.xlsm saved as .xlsx). Save the bid sheet as a plain .xlsx without macros.'
			};
		}
		let total = 0;
		for (const file of files) {
			total += await inflatedSize(file, UPLOAD_LIMITS.uncompressedBytes - total);
			if (total > UPLOAD_LIMITS.uncompressedBytes) {
				return {
					ok: false,
					message: `The workbook expands to more than ${megabytes(UPLOAD_LIMITS.uncompressedBytes)} when unpacked; a bid sheet is far smaller. It was not opened.`
				};
			}
		}
		return { ok: true, kind: 'xlsx', bytes };
	}
	if (bytes.includes(0))
		return { ok: false, message: 'The file is neither an .xlsx workbook nor a .csv text file.' };
	const text = new TextDecoder('utf-8', { fatal: false }).decode(bytes).replace(/^\uFEFF/, '');
	return { ok: true, kind: 'csv', text };
}
