// Reading a PDF the way a person or an auditor's tool does: its text (pdfjs-dist, the legacy build that
// runs in Node), line by line per page, and the fonts it embeds.
import { getDocument } from 'pdfjs-dist/legacy/build/pdf.mjs';

interface Positioned {
	str: string;
	transform: number[];
	width: number;
}

/** Each page's text as lines, top to bottom; pieces of one line set in different fonts are joined again. */
export async function pdfPages(bytes: Uint8Array): Promise<string[][]> {
	const pdf = await getDocument({ data: new Uint8Array(bytes), verbosity: 0 }).promise;
	const pages: string[][] = [];
	for (let n = 1; n <= pdf.numPages; n++) {
		const content = await (await pdf.getPage(n)).getTextContent();
		const lines = new Map<number, Positioned[]>();
		for (const item of content.items as Positioned[]) {
			if (!('str' in item) || !item.str) continue;
			const y = Math.round(item.transform[5]!);
			lines.set(y, [...(lines.get(y) ?? []), item]);
		}
		pages.push(
			[...lines.entries()]
				.sort(([a], [b]) => b - a)
				.map(([, items]) => {
					items.sort((a, b) => a.transform[4]! - b.transform[4]!);
					let text = '';
					let end = -Infinity;
					for (const item of items) {
						const x = item.transform[4]!;
						text += (text && x - end > 1 ? ' ' : '') + item.str;
						end = x + item.width;
					}
					return text;
				})
		);
	}
	await pdf.destroy();
	return pages;
}

/** All the text, whitespace collapsed: what a search in a PDF reader matches. */
export async function pdfText(bytes: Uint8Array): Promise<string> {
	return (await pdfPages(bytes)).flat().join(' ').replace(/\s+/g, ' ');
}

/**
 * The fonts of the file's font dictionaries (their BaseFont names, without the subset tag) and whether
 * each has an embedded font program (FontFile2 for TrueType outlines, FontFile3 for CFF). pdfkit writes
 * its dictionaries uncompressed, so they are read from the bytes.
 */
export function embeddedFonts(bytes: Uint8Array): {
	baseFonts: string[];
	fontFiles: number;
	standardFonts: number;
} {
	const raw = Buffer.from(bytes).toString('latin1');
	const baseFonts = [...raw.matchAll(/\/BaseFont\s*\/(?:[A-Z]{6}\+)?([^\s/<>[\]]+)/g)].map((m) => m[1]!);
	return {
		baseFonts: [...new Set(baseFonts)],
		fontFiles: (raw.match(/\/FontFile[23]\b/g) ?? []).length,
		standardFonts: (raw.match(/\/Subtype\s*\/Type1\b/g) ?? []).length
	};
}
