// The bid sheet of an event for one supplier (.xlsx with exceljs, or .csv), and reading a filled one
// back. Every problem is reported at once with its sheet, row and column; nothing is a bid unless the
// whole sheet is valid. Formulas are never evaluated: a formula cell is refused.
import ExcelJS from 'exceljs';
import { parse as parseCsv } from 'csv-parse/sync';
import { countedWhole } from '$lib/award/core/units';
import { formatTime } from '$lib/format';
import type { BidLine, ParsedBid, SheetProblem } from '../shapes';
import {
	addCriteriaSheet,
	CRITERIA_COLUMNS,
	CRITERIA_SHEET,
	criteriaRows,
	readCriteriaRows,
	type SheetCriterion
} from './criteria-block';

export interface SheetItem {
	ref: string;
	description: string;
	lot: string | null;
	unit: string;
	quantity: number;
	/** The buyer orders this item in multiples of this; absent or null when not. */
	orderMultiple?: number | null;
}

export interface SheetEvent {
	reference: string;
	title: string;
	currency: string;
	bidValidityDays: number;
	deadline: Date;
	timeZone: string;
	allowPriceBreaks: boolean;
	allowCapacity: boolean;
	allowBundles: boolean;
	/** Absent: not allowed. */
	allowPackSizes?: boolean;
	/** The other currencies a bid may use (ISO 4217), each at a rate fixed by the buyer; absent or empty: none. */
	bidCurrencies?: string[];
	items: SheetItem[];
	/** The evaluation criteria the supplier answers (criteria-block.ts); absent or empty: none. */
	criteria?: SheetCriterion[];
}

export type { BidLine, ParsedBid, SheetProblem } from '../shapes';

export const PRICE_BREAKS = 3;
/** Quantities and prices are stored as numeric(20, 6): below 10^14. */
export const LARGEST = 1e14;
export const TOO_LARGE = 'must be less than 100,000,000,000,000';
const SHEETS = {
	instructions: 'Instructions',
	terms: 'Terms',
	prices: 'Prices',
	capacity: 'Capacity',
	bundles: 'Bundles'
};

/** Cells a spreadsheet would read as a formula are prefixed with an apostrophe on export (formula injection). */
export function neutralise(value: string): string {
	return /^[=+\-@\t\r]/.test(value) ? `'${value}` : value;
}

/** The instructions' line on items the buyer orders in multiples (the first 30; the event page lists all). */
function orderedInMultiples(items: SheetItem[]): string {
	const ordered = items.filter((i) => i.orderMultiple != null);
	if (!ordered.length) return '';
	const shown = ordered.slice(0, 30).map((i) => `${i.ref} in ${i.orderMultiple}s`);
	const more =
		ordered.length > 30 ? `, and ${ordered.length - 30} more (the event page lists every one)` : '';
	return `Items ordered in multiples are awarded in whole multiples: ${shown.join(', ')}${more}.`;
}

/** The bid may be in another currency than the event's: then a Currency column says which. */
const inCurrencies = (event: SheetEvent) => Boolean(event.bidCurrencies?.length);
export const CURRENCY_COLUMN = 'Currency';
const unitPriceHeader = (event: SheetEvent) =>
	inCurrencies(event) ? 'Unit price' : `Unit price (${event.currency})`;

export function priceColumns(event: SheetEvent): string[] {
	const columns = ['Item ref', 'Description', 'Lot', 'Unit', 'Quantity', unitPriceHeader(event)];
	if (event.allowCapacity) columns.push('Max quantity');
	if (event.allowPackSizes) columns.push('Pack size');
	if (event.allowPriceBreaks) {
		for (let k = 1; k <= PRICE_BREAKS; k++) columns.push(`Break ${k} from quantity`, `Break ${k} unit price`);
	}
	if (inCurrencies(event)) columns.push(CURRENCY_COLUMN);
	return columns;
}

/** The spreadsheet column letter of a 0-based index: 0 → A, 25 → Z, 26 → AA. */
export const letter = (index: number) => {
	let n = index + 1;
	let out = '';
	while (n > 0) {
		const r = (n - 1) % 26;
		out = String.fromCharCode(65 + r) + out;
		n = Math.floor((n - 1) / 26);
	}
	return out;
};

export async function buildBidSheet(event: SheetEvent, supplierName: string): Promise<Buffer> {
	const workbook = new ExcelJS.Workbook();
	workbook.creator = 'Tenderloom';
	const instructions = workbook.addWorksheet(SHEETS.instructions);
	const lines = [
		`Bid sheet for ${event.reference} — ${event.title}`,
		`Prepared for ${supplierName}.`,
		inCurrencies(event)
			? `Enter your unit prices on the "${SHEETS.prices}" sheet, in the white cells only, and the currency of your bid in the ${CURRENCY_COLUMN} column: ${[event.currency, ...event.bidCurrencies!].join(', ')} (empty means ${event.currency}). Every price of one bid, bundles too, is in one currency; the buyer compares bids at the rates on the event page. Leave a price empty for an item you do not offer.`
			: `Enter your unit prices in ${event.currency} on the "${SHEETS.prices}" sheet, in the white cells only. Leave a price empty for an item you do not offer.`,
		event.allowCapacity
			? 'You may give a maximum quantity per item, and your total capacity on the "Capacity" sheet.'
			: '',
		event.allowPriceBreaks
			? `You may give up to ${PRICE_BREAKS} price breaks per item: from that quantity on, the break's unit price applies to the whole quantity awarded. Quantities must rise and prices fall.`
			: '',
		event.allowPackSizes
			? 'You may give a pack size per item: you are then awarded whole packs only (a multiple of the pack size). For an item counted in whole units (such as C62 or PR) it must be a whole number.'
			: '',
		orderedInMultiples(event.items),
		event.criteria?.length
			? `Answer every criterion on the "${CRITERIA_SHEET}" sheet: the buyer turns each answer into money added to your prices when comparing bids.`
			: '',
		event.allowBundles
			? 'You may offer bundles (all or nothing) on the "Bundles" sheet: one row per item of the bundle, its price on the first row.'
			: '',
		'Type numbers, not formulas. Do not add, remove or rename sheets, rows or columns.',
		`Upload the sheet before the deadline: ${formatTime(event.deadline, event.timeZone)}. You can upload again until then; the latest accepted upload is your bid.`
	].filter(Boolean);
	lines.forEach((text, i) => (instructions.getCell(`A${i + 1}`).value = text));
	instructions.getColumn(1).width = 120;

	const terms = workbook.addWorksheet(SHEETS.terms);
	terms.addRows([
		['Event reference', event.reference],
		['Event', event.title],
		['Currency', event.currency],
		['Bid validity (days)', event.bidValidityDays],
		['Bid deadline', formatTime(event.deadline, event.timeZone)],
		['Supplier', supplierName]
	]);
	terms.getColumn(1).width = 24;
	terms.getColumn(2).width = 60;
	await terms.protect('', {});

	const prices = workbook.addWorksheet(SHEETS.prices);
	const columns = priceColumns(event);
	prices.addRow(columns).font = { bold: true };
	for (const item of event.items)
		prices.addRow([item.ref, neutralise(item.description), item.lot ?? '', item.unit, item.quantity]);
	prices.columns.forEach((column, i) => (column.width = i === 1 ? 40 : 16));
	const last = event.items.length + 1;
	for (let c = 5; c < columns.length; c++) {
		for (let r = 2; r <= last; r++) prices.getCell(r, c + 1).protection = { locked: false };
	}
	if (event.items.length) {
		// One range-wide validation per column (per-cell validations overlap in exceljs).
		for (let c = 5; c < columns.length; c++) {
			if (columns[c] === CURRENCY_COLUMN) {
				(
					prices as unknown as { dataValidations: { add: (range: string, v: object) => void } }
				).dataValidations.add(`${letter(c)}2:${letter(c)}${last}`, {
					type: 'list',
					formulae: [`"${[event.currency, ...event.bidCurrencies!].join(',')}"`],
					allowBlank: true,
					showErrorMessage: true,
					errorTitle: 'A currency of this event',
					error: `Choose ${[event.currency, ...event.bidCurrencies!].join(', ')}, or leave the cell empty for ${event.currency}.`
				});
				continue;
			}
			(
				prices as unknown as { dataValidations: { add: (range: string, v: object) => void } }
			).dataValidations.add(`${letter(c)}2:${letter(c)}${last}`, {
				type: 'decimal',
				operator: 'greaterThanOrEqual',
				formulae: [0],
				allowBlank: true,
				showErrorMessage: true,
				errorTitle: 'A number',
				error: 'Type a number of 0 or more, or leave the cell empty.'
			});
		}
	}
	await prices.protect('', { formatColumns: true });

	if (event.allowCapacity) {
		const capacity = workbook.addWorksheet(SHEETS.capacity);
		capacity.addRow(['Total capacity (units over all items)', null]);
		capacity.getCell('B1').protection = { locked: false };
		capacity.getColumn(1).width = 40;
		await capacity.protect('', {});
	}
	if (event.allowBundles) {
		const bundles = workbook.addWorksheet(SHEETS.bundles);
		const priceIn = inCurrencies(event) ? 'in your bid currency' : event.currency;
		bundles.addRow(['Bundle ref', 'Item ref', 'Quantity', `Bundle price (${priceIn})`]).font = {
			bold: true
		};
		bundles.columns.forEach((column) => (column.width = 20));
	}
	if (event.criteria?.length) await addCriteriaSheet(workbook, event.criteria, neutralise);
	return Buffer.from(await workbook.xlsx.writeBuffer());
}

export function buildBidCsv(event: SheetEvent): string {
	const quote = (value: string | number) => {
		const text = typeof value === 'number' ? String(value) : neutralise(value);
		return /[",\n\r]/.test(text) ? `"${text.replace(/"/g, '""')}"` : text;
	};
	const rows = [
		priceColumns(event),
		...event.items.map((i) => [i.ref, i.description, i.lot ?? '', i.unit, i.quantity]),
		...(event.criteria?.length ? criteriaRows(event.criteria).map((r) => r.map((c) => c ?? '')) : [])
	];
	return `${rows.map((r) => r.map(quote).join(',')).join('\r\n')}\r\n`;
}

type Cell = string | number | null | { formula: string };

/** The value of a cell as the supplier typed it; formulas are marked, never evaluated. */
function cellOf(cell: ExcelJS.Cell): Cell {
	const value = cell.value;
	if (value === null || value === undefined) return null;
	if (typeof value === 'number' || typeof value === 'string')
		return typeof value === 'string' ? value.trim() || null : value;
	if (typeof value === 'object' && ('formula' in value || 'sharedFormula' in value))
		return { formula: String((value as { formula?: string }).formula ?? '') };
	if (typeof value === 'object' && 'richText' in value)
		return (
			value.richText
				.map((t) => t.text)
				.join('')
				.trim() || null
		);
	if (value instanceof Date) return value.toISOString();
	return String(value);
}

class Problems {
	readonly list: SheetProblem[] = [];
	add(sheet: string, row: number | null, column: string | null, message: string) {
		this.list.push({ sheet, row, column, message });
	}
}

function numberIn(
	problems: Problems,
	sheet: string,
	row: number | null,
	column: string,
	value: Cell,
	rule: { positive?: boolean }
): number | null {
	if (value === null) return null;
	if (typeof value === 'object') {
		problems.add(sheet, row, column, 'a formula is not accepted here; type the number itself');
		return null;
	}
	const number = typeof value === 'number' ? value : Number(value.replace(/\s/g, ''));
	if (
		typeof value === 'string' &&
		(value === '' || !/^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(value.replace(/\s/g, '')))
	) {
		// "12,07": a decimal comma (common in much of Europe) is refused, not guessed, since "1,234" could
		// be a thousand; the message says how to write it.
		const comma = /^[+-]?\d+,\d+$/.test(value.replace(/\s/g, ''));
		problems.add(
			sheet,
			row,
			column,
			comma
				? `"${value.slice(0, 40)}" is not a number: write the decimal mark as a point (${value.replace(/\s/g, '').replace(',', '.')})`
				: `"${value.slice(0, 40)}" is not a number`
		);
		return null;
	}
	if (!Number.isFinite(number)) {
		problems.add(sheet, row, column, `"${String(value).slice(0, 40)}" is too large to be a number`);
		return null;
	}
	if (number < 0) {
		problems.add(sheet, row, column, 'must not be negative');
		return null;
	}
	if (number >= LARGEST) {
		problems.add(sheet, row, column, TOO_LARGE);
		return null;
	}
	if (rule.positive && number === 0) {
		problems.add(sheet, row, column, 'must be more than 0');
		return null;
	}
	return number;
}

/**
 * The currency of a priced row: empty is the event currency; a code the event does not allow, or one that
 * differs from the bid's first priced row, is a problem on that cell. `bid.currency` is the first one.
 */
function currencyIn(
	event: SheetEvent,
	problems: Problems,
	at: { sheet: string; row: number; column: string },
	value: Cell,
	bid: { currency?: string; row?: number }
): void {
	const allowed = [event.currency, ...(event.bidCurrencies ?? [])];
	if (value !== null && typeof value === 'object') {
		problems.add(at.sheet, at.row, at.column, 'a formula is not accepted here; type the currency code');
		return;
	}
	const code = value === null ? event.currency : String(value).trim().toUpperCase();
	if (!allowed.includes(code)) {
		problems.add(
			at.sheet,
			at.row,
			at.column,
			`"${String(value).slice(0, 20)}" is not a currency of this event: use ${allowed.join(', ')} (empty means ${event.currency})`
		);
		return;
	}
	if (bid.currency === undefined) Object.assign(bid, { currency: code, row: at.row });
	else if (bid.currency !== code)
		problems.add(
			at.sheet,
			at.row,
			at.column,
			`${code}${value === null ? ' (empty)' : ''} differs from ${bid.currency} on row ${bid.row}: every price of one bid is in one currency`
		);
}

/** Reads the price table (sheet or CSV rows: header first) into bid lines, adding every problem found. */
function readPriceRows(
	event: SheetEvent,
	sheet: string,
	rows: Cell[][],
	problems: Problems,
	bid: { currency?: string; row?: number } = {}
): BidLine[] {
	const expected = priceColumns(event);
	const header = (rows[0] ?? []).map((c) => (typeof c === 'string' ? c : c === null ? '' : String(c)));
	if (expected.some((name, i) => header[i] !== name)) {
		const wrong = expected.findIndex((name, i) => header[i] !== name);
		problems.add(
			sheet,
			1,
			letter(wrong),
			`the header must be "${expected[wrong]}" here; the columns must be: ${expected.join(', ')}`
		);
		return [];
	}
	const items = new Map(event.items.map((i) => [i.ref, i]));
	const seen = new Set<string>();
	const lines: BidLine[] = [];
	const at = (name: string) => expected.indexOf(name);
	rows.slice(1).forEach((cells, index) => {
		const row = index + 2;
		if (cells.every((c) => c === null)) return;
		const ref = typeof cells[0] === 'string' ? cells[0] : cells[0] === null ? null : String(cells[0]);
		if (!ref) {
			problems.add(sheet, row, 'A', 'the item ref is missing');
			return;
		}
		const item = items.get(ref);
		if (!item) {
			problems.add(sheet, row, 'A', `"${ref}" is not an item of this event`);
			return;
		}
		if (seen.has(ref)) {
			problems.add(sheet, row, 'A', `"${ref}" appears twice`);
			return;
		}
		seen.add(ref);
		const price = numberIn(
			problems,
			sheet,
			row,
			letter(at(unitPriceHeader(event))),
			cells[at(unitPriceHeader(event))] ?? null,
			{}
		);
		const currencyColumn = at(CURRENCY_COLUMN);
		if (currencyColumn >= 0 && price !== null)
			currencyIn(
				event,
				problems,
				{ sheet, row, column: letter(currencyColumn) },
				cells[currencyColumn] ?? null,
				bid
			);
		const maxColumn = at('Max quantity');
		const maxQuantity =
			maxColumn >= 0
				? numberIn(problems, sheet, row, letter(maxColumn), cells[maxColumn] ?? null, { positive: true })
				: null;
		const packColumn = at('Pack size');
		const packSize =
			packColumn >= 0
				? numberIn(problems, sheet, row, letter(packColumn), cells[packColumn] ?? null, { positive: true })
				: null;
		if (packSize !== null) {
			if (countedWhole({ unit: item.unit }) && !Number.isInteger(packSize))
				problems.add(
					sheet,
					row,
					letter(packColumn),
					`${packSize} is not a whole number, and ${item.unit} is counted in whole units`
				);
			else if (maxQuantity !== null && maxQuantity < packSize)
				problems.add(
					sheet,
					row,
					letter(maxColumn),
					`a maximum quantity of ${maxQuantity} is less than one pack of ${packSize}`
				);
		}
		const breaks: BidLine['priceBreaks'] = [];
		if (event.allowPriceBreaks) {
			let previous = { fromQuantity: 0, unitPrice: price ?? Infinity };
			for (let k = 1; k <= PRICE_BREAKS; k++) {
				const fromAt = at(`Break ${k} from quantity`);
				const priceAt = at(`Break ${k} unit price`);
				const from = numberIn(problems, sheet, row, letter(fromAt), cells[fromAt] ?? null, {
					positive: true
				});
				const breakPrice = numberIn(problems, sheet, row, letter(priceAt), cells[priceAt] ?? null, {});
				const fromGiven = (cells[fromAt] ?? null) !== null;
				const priceGiven = (cells[priceAt] ?? null) !== null;
				if (fromGiven !== priceGiven) {
					problems.add(
						sheet,
						row,
						letter(fromGiven ? priceAt : fromAt),
						`break ${k} needs both a from quantity and a unit price`
					);
					continue;
				}
				if (from === null || breakPrice === null) continue;
				if (price === null)
					problems.add(sheet, row, letter(fromAt), 'a price break needs a unit price for the item');
				if (from <= previous.fromQuantity)
					problems.add(
						sheet,
						row,
						letter(fromAt),
						`must be more than ${previous.fromQuantity} (quantities rise from break to break)`
					);
				if (breakPrice >= previous.unitPrice)
					problems.add(
						sheet,
						row,
						letter(priceAt),
						`must be less than ${previous.unitPrice} (prices fall from break to break)`
					);
				breaks.push({ fromQuantity: from, unitPrice: breakPrice });
				previous = { fromQuantity: from, unitPrice: breakPrice };
			}
		}
		if (price === null) {
			if (maxQuantity !== null)
				problems.add(sheet, row, letter(maxColumn), 'a maximum quantity needs a unit price for the item');
			if (packSize !== null)
				problems.add(sheet, row, letter(packColumn), 'a pack size needs a unit price for the item');
			return;
		}
		lines.push({
			item: ref,
			unitPrice: price,
			maxQuantity,
			...(packSize !== null ? { packSize } : {}),
			priceBreaks: breaks
		});
	});
	return lines;
}

function rowsOf(sheet: ExcelJS.Worksheet, width: number): Cell[][] {
	const rows: Cell[][] = [];
	for (let r = 1; r <= sheet.rowCount; r++) {
		const row = sheet.getRow(r);
		rows.push(Array.from({ length: width }, (_, c) => cellOf(row.getCell(c + 1))));
	}
	return rows;
}

export type ParseOutcome = { ok: true; bid: ParsedBid } | { ok: false; problems: SheetProblem[] };

export async function parseBidWorkbook(event: SheetEvent, bytes: Buffer): Promise<ParseOutcome> {
	const problems = new Problems();
	const workbook = new ExcelJS.Workbook();
	try {
		await workbook.xlsx.load(bytes as unknown as ArrayBuffer);
	} catch {
		return {
			ok: false,
			problems: [
				{
					sheet: '(workbook)',
					row: null,
					column: null,
					message: 'the workbook cannot be read; save it as .xlsx again'
				}
			]
		};
	}
	const prices = workbook.getWorksheet(SHEETS.prices);
	if (!prices) {
		return {
			ok: false,
			problems: [
				{
					sheet: SHEETS.prices,
					row: null,
					column: null,
					message: `the workbook has no sheet named "${SHEETS.prices}"; use the bid sheet downloaded for this event`
				}
			]
		};
	}
	const inCurrency: { currency?: string } = {};
	const lines = readPriceRows(
		event,
		SHEETS.prices,
		rowsOf(prices, priceColumns(event).length),
		problems,
		inCurrency
	);
	let capacity: number | null = null;
	if (event.allowCapacity) {
		const sheet = workbook.getWorksheet(SHEETS.capacity);
		if (sheet) capacity = numberIn(problems, SHEETS.capacity, 1, 'B', cellOf(sheet.getCell('B1')), {});
	}
	const bundles: ParsedBid['bundles'] = [];
	if (event.allowBundles) {
		const sheet = workbook.getWorksheet(SHEETS.bundles);
		const items = new Map(event.items.map((i) => [i.ref, i]));
		if (sheet) {
			const rows = rowsOf(sheet, 4).slice(1);
			rows.forEach((cells, index) => {
				const row = index + 2;
				if (cells.every((c) => c === null)) return;
				const ref = cells[0] === null ? null : String(cells[0]);
				const itemRef = cells[1] === null ? null : String(cells[1]);
				if (!ref) return problems.add(SHEETS.bundles, row, 'A', 'the bundle ref is missing');
				if (!itemRef || !items.has(itemRef)) {
					problems.add(
						SHEETS.bundles,
						row,
						'B',
						itemRef ? `"${itemRef}" is not an item of this event` : 'the item ref is missing'
					);
					return;
				}
				const quantity = numberIn(problems, SHEETS.bundles, row, 'C', cells[2] ?? null, { positive: true });
				if (quantity === null && cells[2] === null)
					problems.add(SHEETS.bundles, row, 'C', 'the quantity is missing');
				if (quantity !== null && quantity > items.get(itemRef)!.quantity) {
					problems.add(
						SHEETS.bundles,
						row,
						'C',
						`must not exceed the item's quantity ${items.get(itemRef)!.quantity}`
					);
				}
				let bundle = bundles.find((b) => b.ref === ref);
				const price = numberIn(problems, SHEETS.bundles, row, 'D', cells[3] ?? null, {});
				if (!bundle) {
					if (price === null && cells[3] === null)
						problems.add(SHEETS.bundles, row, 'D', "the bundle's price is missing on its first row");
					bundles.push((bundle = { ref, price: price ?? 0, items: [] }));
				} else if (cells[3] !== null) {
					problems.add(SHEETS.bundles, row, 'D', "give the bundle's price on its first row only");
				}
				if (bundle.items.some((l) => l.item === itemRef))
					problems.add(SHEETS.bundles, row, 'B', `"${itemRef}" appears twice in bundle ${ref}`);
				if (quantity !== null) bundle.items.push({ item: itemRef, quantity });
			});
		}
	}
	let answers: Record<string, number> | undefined;
	if (event.criteria?.length) {
		const sheet = workbook.getWorksheet(CRITERIA_SHEET);
		answers = readAnswers(event.criteria, CRITERIA_SHEET, sheet ? rowsOf(sheet, 4) : [], 1, problems);
	}
	if (!problems.list.length && !lines.length && !bundles.length) {
		problems.add(
			SHEETS.prices,
			null,
			null,
			'the sheet has no prices: enter a unit price for at least one item'
		);
	}
	return problems.list.length
		? { ok: false, problems: problems.list }
		: {
				ok: true,
				bid: { lines, capacity, bundles, ...currencyOf(event, inCurrency), ...(answers ? { answers } : {}) }
			};
}

export function parseBidCsv(event: SheetEvent, text: string): ParseOutcome {
	const problems = new Problems();
	let records: string[][];
	try {
		records = parseCsv(text, { relax_column_count: true, skip_empty_lines: true, bom: true }) as string[][];
	} catch (error) {
		return {
			ok: false,
			problems: [
				{
					sheet: 'CSV',
					row: null,
					column: null,
					message: `the file is not valid CSV: ${(error as Error).message}`
				}
			]
		};
	}
	// Every CSV cell is text: a leading = + - @ is data here, never a formula.
	const all: Cell[][] = records.map((r) => r.map((c) => (c.trim() === '' ? null : c.trim())));
	// The criteria block, where the event has criteria, starts at its own header row after the items.
	const block = event.criteria?.length ? all.findIndex((r) => r[0] === CRITERIA_COLUMNS[0]) : -1;
	const rows = block >= 0 ? all.slice(0, block) : all;
	const answers = event.criteria?.length
		? readAnswers(event.criteria, 'CSV', block >= 0 ? all.slice(block) : [], block + 1, problems)
		: undefined;
	const inCurrency: { currency?: string } = {};
	const lines = readPriceRows(event, 'CSV', rows, problems, inCurrency);
	if (!problems.list.length && !lines.length)
		problems.add('CSV', null, null, 'the file has no prices: enter a unit price for at least one item');
	return problems.list.length
		? { ok: false, problems: problems.list }
		: {
				ok: true,
				bid: {
					lines,
					capacity: null,
					bundles: [],
					...currencyOf(event, inCurrency),
					...(answers ? { answers } : {})
				}
			};
}

function readAnswers(
	criteria: SheetCriterion[],
	sheet: string,
	rows: Cell[][],
	firstRow: number,
	problems: Problems
): Record<string, number> {
	return readCriteriaRows(
		criteria,
		sheet,
		rows,
		firstRow,
		(row, column, value) => numberIn(problems, sheet, row, column, value, {}),
		(row, column, message) => problems.add(sheet, row, column, message)
	);
}

/** The bid's currency when it is not the event's (ParsedBid.currency is absent for the event currency). */
const currencyOf = (event: SheetEvent, found: { currency?: string }) =>
	found.currency && found.currency !== event.currency ? { currency: found.currency } : {};

export const SCREEN_SHEET = 'On-screen prices';

/**
 * Prices typed in the on-screen table: one row of cells per item, in the columns of the price sheet
 * after the item columns (unit price, max quantity, breaks). The same checks as an upload; problems
 * name the table and the item's row (row 2 is the first item, as on the sheet).
 */
export function parseScreenPrices(
	event: SheetEvent,
	entries: { item: string; cells: (string | null)[] }[],
	capacity: string | null,
	/** The currency chosen for the whole on-screen bid (events with other currencies); empty: the event's. */
	currency: string | null = null,
	/** Typed answers to the criteria, by criterion ref. */
	typedAnswers: Record<string, string | null> = {}
): ParseOutcome {
	const problems = new Problems();
	const columns = priceColumns(event);
	const byRef = new Map(entries.map((e) => [e.item, e.cells]));
	const rows: Cell[][] = [
		columns,
		...event.items.map((item) => {
			const typed = (byRef.get(item.ref) ?? []).map((c) => (c === null || c.trim() === '' ? null : c.trim()));
			const cells: Cell[] = [item.ref, item.description, item.lot, item.unit, item.quantity, ...typed];
			if (inCurrencies(event)) cells[columns.length - 1] = currency?.trim() || null;
			return cells;
		})
	];
	const inCurrency: { currency?: string } = {};
	const lines = readPriceRows(event, SCREEN_SHEET, rows, problems, inCurrency);
	const answers = event.criteria?.length
		? readAnswers(
				event.criteria,
				SCREEN_SHEET,
				criteriaRows(event.criteria).map((r, i) =>
					i === 0 ? r : [...r.slice(0, 3), typedAnswers[String(r[0])]?.trim() || null]
				),
				event.items.length + 2,
				problems
			)
		: undefined;
	const capacityValue =
		event.allowCapacity && capacity !== null && capacity.trim() !== ''
			? numberIn(problems, SCREEN_SHEET, null, 'Capacity', capacity.trim(), {})
			: null;
	if (!problems.list.length && !lines.length)
		problems.add(SCREEN_SHEET, null, null, 'enter a unit price for at least one item');
	return problems.list.length
		? { ok: false, problems: problems.list }
		: {
				ok: true,
				bid: {
					lines,
					capacity: capacityValue,
					bundles: [],
					...currencyOf(event, inCurrency),
					...(answers ? { answers } : {})
				}
			};
}
