// A small layout layer over pdfkit for reports: A4 pages, headings, wrapped paragraphs, label-value lists
// and tables drawn as aligned text rows (numbers right-aligned, the header repeated on each page a table
// continues onto), a caution box, and a footer with the page numbers written once every page exists.
//
// Text is set in Public Sans from @fontsource/public-sans, embedded (subset) in the file, so neither the
// server nor the reader needs the font. The package splits the font by script; each run of characters is
// set in the subset that has its glyphs. The files are resolved from node_modules at run time (the
// package is a dependency, so the built server keeps it beside the build).
import { createRequire } from 'node:module';
import PDFDocument from 'pdfkit';

const require = createRequire(import.meta.url);

type Weight = 'regular' | 'bold';
type Subset = 'latin' | 'latin-ext';

// The .woff files: fontkit reads them as well as .woff2, and their name tables say PublicSans-Regular and
// PublicSans-Bold (this package's .woff2 files carry the variable font's "Thin" family name).
const fontFile = (subset: Subset, weight: Weight) =>
	require.resolve(
		`@fontsource/public-sans/files/public-sans-${subset}-${weight === 'bold' ? 700 : 400}-normal.woff`
	);

const fontName = (subset: Subset, weight: Weight) => `${weight}-${subset}`;

/** The code point ranges of each subset, from the package's own unicode.json ("U+0000-00FF,U+0131,…"). */
function subsetRanges(): Record<Subset, [number, number][]> {
	const table = require('@fontsource/public-sans/unicode.json') as Record<string, string>;
	const parse = (text: string | undefined) =>
		(text ?? '').split(',').map((part) => {
			const [from, to] = part.trim().replace(/^U\+/i, '').split('-');
			return [parseInt(from!, 16), parseInt(to ?? from!, 16)] as [number, number];
		});
	return { latin: parse(table.latin), 'latin-ext': parse(table['latin-ext']) };
}

let ranges: Record<Subset, [number, number][]> | undefined;

function subsetOf(codePoint: number): Subset {
	ranges ??= subsetRanges();
	const within = (list: [number, number][]) => list.some(([a, b]) => codePoint >= a && codePoint <= b);
	if (within(ranges.latin)) return 'latin';
	return within(ranges['latin-ext']) ? 'latin-ext' : 'latin';
}

/** Control characters would be set as missing glyphs; line breaks are handled by the wrapping. */
const printable = (text: string) =>
	[...text].map((c) => (c !== '\n' && (c < ' ' || (c >= '\u007f' && c <= '\u009f')) ? ' ' : c)).join('');

export type Align = 'left' | 'right';

export interface Column {
	header: string;
	/** Points; the columns of a table should add up to the page's text width. */
	width: number;
	align?: Align;
}

interface TextStyle {
	weight?: Weight;
	size?: number;
	color?: string;
}

const COLORS = {
	text: '#1f2328',
	muted: '#57606a',
	line: '#c8ced6',
	cautionFill: '#fdf3dc',
	cautionLine: '#b7891a'
};
const A4 = { width: 595.28, height: 841.89 };
const MARGIN = { top: 54, bottom: 62, side: 50 };
const CELL_PADDING = 3;

export class ReportPdf {
	private readonly doc: PDFKit.PDFDocument;
	private readonly done: Promise<Buffer>;
	private y = MARGIN.top;
	readonly left = MARGIN.side;
	readonly width = A4.width - 2 * MARGIN.side;
	private readonly bottom = A4.height - MARGIN.bottom;

	constructor(meta: { title: string; subject: string; createdAt: Date }) {
		this.doc = new PDFDocument({
			size: 'A4',
			margins: { top: MARGIN.top, bottom: MARGIN.bottom, left: MARGIN.side, right: MARGIN.side },
			bufferPages: true,
			// No standard PDF font at all; the first page comes once Public Sans is registered (a font given
			// here and registered again under a name would be opened anew on every switch to it).
			font: '',
			autoFirstPage: false,
			info: {
				Title: meta.title,
				Subject: meta.subject,
				Creator: 'Tenderloom',
				Producer: 'Tenderloom',
				CreationDate: meta.createdAt
			}
		});
		for (const subset of ['latin', 'latin-ext'] as const)
			for (const weight of ['regular', 'bold'] as const)
				this.doc.registerFont(fontName(subset, weight), fontFile(subset, weight));
		this.doc.font(fontName('latin', 'regular')).addPage();
		const chunks: Buffer[] = [];
		this.doc.on('data', (chunk: Buffer) => chunks.push(chunk));
		this.done = new Promise((resolve, reject) => {
			this.doc.on('end', () => resolve(Buffer.concat(chunks)));
			this.doc.on('error', reject);
		});
	}

	/** The text split into runs of one font each. */
	private runs(text: string, weight: Weight): { font: string; text: string }[] {
		const runs: { font: string; text: string }[] = [];
		for (const char of printable(text)) {
			const font = fontName(subsetOf(char.codePointAt(0)!), weight);
			const last = runs.at(-1);
			if (last?.font === font) last.text += char;
			else runs.push({ font, text: char });
		}
		return runs;
	}

	private readonly widths = new Map<string, number>();

	measure(text: string, style: TextStyle = {}): number {
		const size = style.size ?? 9;
		const weight = style.weight ?? 'regular';
		const key = `${weight}|${size}|${text}`;
		let width = this.widths.get(key);
		if (width === undefined) {
			width = this.runs(text, weight).reduce(
				(sum, run) => sum + this.doc.font(run.font).fontSize(size).widthOfString(run.text),
				0
			);
			// Short strings only (words, cells): a long one is rarely measured twice.
			if (this.widths.size < 50_000 && text.length <= 100) this.widths.set(key, width);
		}
		return width;
	}

	/** One line at (x, y), never wrapped and never starting a page. */
	private line(text: string, x: number, y: number, style: TextStyle = {}): void {
		const size = style.size ?? 9;
		this.doc.fillColor(style.color ?? COLORS.text);
		let at = x;
		for (const run of this.runs(text, style.weight ?? 'regular')) {
			this.doc.font(run.font).fontSize(size).text(run.text, at, y, { lineBreak: false });
			at += this.doc.widthOfString(run.text);
		}
	}

	/** Lines of at most `width` points, broken at spaces (a word longer than a line is broken anywhere). */
	wrap(text: string, width: number, style: TextStyle = {}): string[] {
		const lines: string[] = [];
		for (const paragraph of printable(text).split('\n')) {
			let current = '';
			for (const word of paragraph.split(/ +/)) {
				const candidate = current ? `${current} ${word}` : word;
				if (this.measure(candidate, style) <= width) {
					current = candidate;
					continue;
				}
				if (current) lines.push(current);
				// A word wider than the line is cut where its characters, measured one by one, fill it: one
				// pass, not a measure of every shorter prefix (a 4,000-character word took 32 s that way).
				let rest = '';
				let restWidth = 0;
				for (const char of word) {
					const w = this.measure(char, style);
					if (rest && restWidth + w > width) {
						lines.push(rest);
						rest = '';
						restWidth = 0;
					}
					rest += char;
					restWidth += w;
				}
				current = rest;
			}
			lines.push(current);
		}
		return lines;
	}

	private lineHeight(size: number) {
		return size * 1.35;
	}

	private newPage(): void {
		this.doc.addPage();
		this.y = MARGIN.top;
	}

	/** Starts a new page unless `height` more points fit on this one; true when it did. */
	private ensure(height: number): boolean {
		if (this.y + height <= this.bottom) return false;
		this.newPage();
		return true;
	}

	space(points: number): void {
		this.y += points;
	}

	title(text: string): void {
		this.paragraph(text, { weight: 'bold', size: 20 });
		this.space(2);
	}

	/** A section heading, kept with at least `keep` points of what follows it. */
	heading(text: string, keep = 60): void {
		this.space(10);
		this.ensure(this.lineHeight(13) + keep);
		this.line(text, this.left, this.y, { weight: 'bold', size: 13 });
		this.y += this.lineHeight(13) + 2;
	}

	subheading(text: string, keep = 40): void {
		this.space(4);
		this.ensure(this.lineHeight(10) + keep);
		this.line(text, this.left, this.y, { weight: 'bold', size: 10 });
		this.y += this.lineHeight(10);
	}

	paragraph(text: string, style: TextStyle = {}): void {
		const size = style.size ?? 9;
		for (const line of this.wrap(text, this.width, style)) {
			this.ensure(this.lineHeight(size));
			this.line(line, this.left, this.y, { ...style, size });
			this.y += this.lineHeight(size);
		}
		this.space(2);
	}

	/** A boxed caution, kept on one page. */
	caution(text: string): void {
		const size = 10;
		const lines = this.wrap(text, this.width - 20, { weight: 'bold', size });
		const height = lines.length * this.lineHeight(size) + 14;
		this.ensure(height);
		this.doc
			.save()
			.lineWidth(1)
			.rect(this.left, this.y, this.width, height)
			.fillAndStroke(COLORS.cautionFill, COLORS.cautionLine)
			.restore();
		let y = this.y + 7;
		for (const line of lines) {
			this.line(line, this.left + 10, y, { weight: 'bold', size });
			y += this.lineHeight(size);
		}
		this.y += height + 6;
	}

	/** Label and value pairs; values wrap beside their label. */
	fields(rows: [string, string][], labelWidth = 150): void {
		const size = 9;
		for (const [label, value] of rows) {
			const lines = this.wrap(value || '—', this.width - labelWidth, { size });
			lines.forEach((line, k) => {
				if (this.ensure(this.lineHeight(size)) || k === 0)
					this.line(label, this.left, this.y, { size, color: COLORS.muted });
				this.line(line, this.left + labelWidth, this.y, { size });
				this.y += this.lineHeight(size);
			});
		}
		this.space(2);
	}

	/**
	 * A table of text rows: cells wrap within their column, numbers align right; a row is never split, and
	 * a table that reaches the foot of a page continues on the next under its header again.
	 */
	table(columns: Column[], rows: string[][], caption?: string): void {
		const size = 8.5;
		const lineHeight = this.lineHeight(size);
		const header = columns.map((c) =>
			this.wrap(c.header, c.width - 2 * CELL_PADDING, { weight: 'bold', size })
		);
		const headerHeight = Math.max(...header.map((h) => h.length)) * lineHeight + 2 * CELL_PADDING;
		const drawHeader = (continued: boolean) => {
			if (continued && caption) {
				this.line(`${caption} (continued)`, this.left, this.y, { size, color: COLORS.muted });
				this.y += lineHeight;
			}
			this.drawRow(columns, header, headerHeight, { weight: 'bold', size });
			this.doc
				.save()
				.lineWidth(0.8)
				.strokeColor(COLORS.text)
				.moveTo(this.left, this.y)
				.lineTo(this.left + this.width, this.y)
				.stroke()
				.restore();
		};
		const cells = rows.map((row) =>
			row.map((cell, k) => this.wrap(cell, columns[k]!.width - 2 * CELL_PADDING, { size }))
		);
		const linesOf = (row: string[][]) => Math.max(1, ...row.map((c) => c.length));
		const capacity = Math.floor((this.bottom - MARGIN.top - headerHeight - 2 * lineHeight) / lineHeight);
		this.ensure(headerHeight + Math.min(linesOf(cells[0] ?? []), 3) * lineHeight + 2 * CELL_PADDING);
		drawHeader(false);
		for (const row of cells) {
			const count = linesOf(row);
			// A row that fits on a page is never split; a longer one (a long justification) runs on.
			if (count <= capacity && this.ensure(count * lineHeight + 2 * CELL_PADDING)) drawHeader(true);
			let from = 0;
			while (from < count) {
				const room = Math.floor((this.bottom - this.y - 2 * CELL_PADDING) / lineHeight);
				if (room < 1) {
					this.newPage();
					drawHeader(true);
					continue;
				}
				const to = Math.min(count, from + room);
				this.drawRow(
					columns,
					row.map((c) => c.slice(from, to)),
					(to - from) * lineHeight + 2 * CELL_PADDING,
					{ size }
				);
				from = to;
				if (from < count) {
					this.newPage();
					drawHeader(true);
				}
			}
			this.doc
				.save()
				.lineWidth(0.4)
				.strokeColor(COLORS.line)
				.moveTo(this.left, this.y)
				.lineTo(this.left + this.width, this.y)
				.stroke()
				.restore();
		}
		this.space(6);
	}

	private drawRow(columns: Column[], cells: string[][], height: number, style: TextStyle): void {
		const size = style.size ?? 9;
		let x = this.left;
		columns.forEach((column, k) => {
			let y = this.y + CELL_PADDING;
			for (const line of cells[k] ?? []) {
				const at =
					column.align === 'right'
						? x + column.width - CELL_PADDING - this.measure(line, style)
						: x + CELL_PADDING;
				this.line(line, at, y, style);
				y += this.lineHeight(size);
			}
			x += column.width;
		});
		this.y += height;
	}

	/** Writes the footer on every page ("Page 2 of 9") and returns the file. */
	async finish(footer: string): Promise<Buffer> {
		const { start, count } = this.doc.bufferedPageRange();
		for (let k = start; k < start + count; k++) {
			this.doc.switchToPage(k);
			// The footer sits in the bottom margin: with none left, pdfkit would start a page for it.
			this.doc.page.margins.bottom = 0;
			const y = A4.height - MARGIN.bottom + 22;
			this.doc
				.save()
				.lineWidth(0.4)
				.strokeColor(COLORS.line)
				.moveTo(this.left, y - 6)
				.lineTo(this.left + this.width, y - 6)
				.stroke()
				.restore();
			this.line(footer, this.left, y, { size: 8, color: COLORS.muted });
			const page = `Page ${k - start + 1} of ${count}`;
			this.line(page, this.left + this.width - this.measure(page, { size: 8 }), y, {
				size: 8,
				color: COLORS.muted
			});
		}
		this.doc.end();
		return this.done;
	}
}
