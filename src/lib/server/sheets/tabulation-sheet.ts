// The tabulation as a workbook: one sheet of prices (a row per item, a column per current bid, the lowest
// marked in its own column as well as in bold, so a filter or a screen reader finds it), one of supplier
// totals (with each bid's own currency, its evaluated cost where the event has non-price criteria, and
// its change since the round before), one of the prices the abnormally-low screen flags. Frozen header,
// autofilter, number formats in the event's currency. Every text cell from data is neutralised, so a
// spreadsheet never reads a supplier's or item's name as a formula.
import ExcelJS from 'exceljs';
import { describeFlag, lowPriceFlags } from '../low-price-flags';
import type { Tabulated } from '../tabulation';
import { neutralise } from './bid-sheet';
import { EXCEL_SHARE_FORMAT, excelMoneyFormat, excelQuantityFormat, excelUnitPriceFormat } from '$lib/format';

export interface TabulationSheetEvent {
	reference: string;
	title: string;
	currency: string;
}

/** What the Bids tab shows beside the tabulation, for the Suppliers sheet. */
export interface TabulationSheetExtras {
	/** Each supplier's evaluated cost, price plus criteria (null: the event has no non-price criteria). */
	evaluated: { supplierId: string; evaluated: number; missing?: string[] }[] | null;
	/** Each supplier's landed total in the round before the latest opened one (null: one round so far). */
	rounds: {
		from: number;
		to: number;
		suppliers: { supplierOrganisationId: string; before: number | null }[];
	} | null;
}

export async function tabulationWorkbook(
	event: TabulationSheetEvent,
	tab: Tabulated,
	rows: readonly number[],
	filters: string,
	extras: TabulationSheetExtras = { evaluated: null, rounds: null }
): Promise<Buffer> {
	const workbook = new ExcelJS.Workbook();
	workbook.creator = 'Tenderloom';
	const money = excelMoneyFormat(event.currency);
	const unitPrice = excelUnitPriceFormat(event.currency);
	const width = tab.suppliers.length;
	const columns = tab.suppliers.flatMap((s, c) => (s.withdrawn ? [] : [c]));
	const flags = lowPriceFlags(tab);
	const flaggedCells = new Map(
		flags.flatMap((f) =>
			f.row === null ? [] : [[f.row * width + f.column, describeFlag(f, event.currency)]]
		)
	);

	const prices = workbook.addWorksheet('Prices', { views: [{ state: 'frozen', xSplit: 2, ySplit: 1 }] });
	const head = [
		'Item',
		'Description',
		'Lot',
		'Quantity',
		'Unit',
		`Baseline unit price (${event.currency})`,
		`Baseline total (${event.currency})`,
		`Lowest landed unit price (${event.currency})`,
		'Lowest from',
		...columns.map((c) => neutralise(tab.suppliers[c]!.name))
	];
	prices.addRow(head).font = { bold: true };
	const fixed = 9;
	for (const r of rows) {
		const item = tab.items[r]!;
		const row = prices.addRow([
			neutralise(item.ref),
			neutralise(item.description),
			neutralise(item.lot ?? ''),
			item.quantity,
			neutralise(item.unit),
			item.baselineUnitPrice,
			item.baselineUnitPrice === null ? null : item.baselineUnitPrice * item.quantity,
			item.lowest,
			neutralise(item.lowestBy.map((c) => tab.suppliers[c]!.name).join(', ')),
			...columns.map((c) => {
				const price = tab.prices[r * width + c]!;
				return Number.isNaN(price) ? null : price;
			})
		]);
		row.getCell(4).numFmt = excelQuantityFormat(item.quantity);
		row.getCell(6).numFmt = unitPrice;
		row.getCell(7).numFmt = money;
		row.getCell(8).numFmt = unitPrice;
		columns.forEach((c, k) => {
			const cell = row.getCell(fixed + 1 + k);
			cell.numFmt = unitPrice;
			if (item.lowestBy.includes(c)) cell.font = { bold: true };
			const flagged = flaggedCells.get(r * width + c);
			if (flagged) cell.note = `Abnormally low? ${flagged}`;
		});
	}
	prices.autoFilter = { from: { row: 1, column: 1 }, to: { row: 1, column: head.length } };
	prices.getColumn(1).width = 14;
	prices.getColumn(2).width = 36;
	for (let k = 3; k <= head.length; k++) prices.getColumn(k).width = k === 5 ? 8 : 16;

	const totals = workbook.addWorksheet('Suppliers', { views: [{ state: 'frozen', xSplit: 1, ySplit: 1 }] });
	const evaluated = new Map((extras.evaluated ?? []).map((e) => [e.supplierId, e]));
	const before = new Map((extras.rounds?.suppliers ?? []).map((r) => [r.supplierOrganisationId, r.before]));
	const totalsHead = [
		'Supplier',
		'Revision',
		'Withdrawn',
		'Items priced',
		'Share of items',
		'Share of baseline value',
		`Total at its prices (${event.currency})`,
		`Baseline of priced items with one (${event.currency})`,
		`Its total for those items (${event.currency})`,
		'Items where lowest',
		`Value where lowest (${event.currency})`,
		'Capacity (units)',
		'Bundle offers',
		'Bid currency',
		`Rate (${event.currency} per unit)`,
		'Its own prices in its currency, before freight and duty',
		...(extras.evaluated
			? [`Evaluated cost, price and criteria (${event.currency})`, 'Criteria not yet answered or scored']
			: []),
		...(extras.rounds
			? [
					`Total in round ${extras.rounds.from} (${event.currency})`,
					`Change since round ${extras.rounds.from} (${event.currency})`
				]
			: [])
	];
	totals.addRow(totalsHead).font = { bold: true };
	for (const s of tab.suppliers) {
		const total = s.itemsBid && !s.withdrawn ? s.total : null;
		const own = s.bidCurrency;
		const evaluation = evaluated.get(s.id);
		const earlier = before.get(s.id) ?? null;
		const row = totals.addRow([
			neutralise(s.name),
			s.revision,
			s.withdrawn ? 'yes' : 'no',
			s.itemsBid,
			s.itemShare,
			s.baselineShare,
			s.total,
			s.baselineOfPriced,
			s.totalOfBaselined,
			s.lowestItems,
			s.lowestValue,
			s.capacity,
			s.bundles.length,
			own?.code ?? event.currency,
			own?.rate ?? 1,
			own ? own.total : null,
			...(extras.evaluated
				? [evaluation?.evaluated ?? null, neutralise((evaluation?.missing ?? []).join(', '))]
				: []),
			...(extras.rounds ? [earlier, earlier !== null && total !== null ? total - earlier : null] : [])
		]);
		for (const k of [5, 6]) row.getCell(k).numFmt = EXCEL_SHARE_FORMAT;
		for (const k of [7, 8, 9, 11]) row.getCell(k).numFmt = money;
		if (own) row.getCell(16).numFmt = excelMoneyFormat(own.code);
		if (extras.evaluated) row.getCell(17).numFmt = money;
		if (extras.rounds) for (const k of [0, 1]) row.getCell(totalsHead.length - 1 + k).numFmt = money;
	}
	totals.autoFilter = { from: { row: 1, column: 1 }, to: { row: 1, column: totalsHead.length } };
	totals.columns.forEach((c, k) => (c.width = k === 0 ? 28 : 18));

	const low = workbook.addWorksheet('Low prices', { views: [{ state: 'frozen', ySplit: 1 }] });
	const lowHead = [
		'Supplier',
		'Item',
		`Price as bid, without freight and duty (${event.currency})`,
		'Why it is flagged'
	];
	low.addRow(lowHead).font = { bold: true };
	for (const f of flags) {
		const row = low.addRow([
			neutralise(f.supplier),
			f.item === null ? 'Whole bid (its total)' : neutralise(f.item),
			f.price,
			describeFlag(f, event.currency)
		]);
		row.getCell(3).numFmt = f.item === null ? money : unitPrice;
	}
	low.autoFilter = { from: { row: 1, column: 1 }, to: { row: 1, column: lowHead.length } };
	low.columns.forEach((c, k) => (c.width = [28, 24, 18, 90][k]));

	const about = workbook.addWorksheet('About');
	const s = tab.summary;
	about.addRows([
		['Event', neutralise(event.reference)],
		['Title', neutralise(event.title)],
		['Currency', event.currency],
		['Items', s.items],
		['Items with a bid', s.itemsWithBids],
		[`Baseline total (${event.currency})`, s.baselineTotal],
		[`Each item at its lowest bid (${event.currency})`, s.cherryPickTotal],
		['Rows in this file', rows.length],
		['Filters', neutralise(filters || 'none')],
		[
			'Note',
			'Landed unit prices: the bid’s price at the item’s whole quantity (its all-units price break, where reached), ' +
				'plus the item’s freight and duty, in the event’s currency at the event’s fixed rates. The lowest-bid total ignores ' +
				'capacities, maximum quantities, award rules and non-price criteria.'
		],
		[
			'Low prices',
			'A flagged price is a reason to ask the supplier to explain it, not a finding: the buyer must ask before rejecting ' +
				'an abnormally low bid (EU Directive 2014/24/EU Art. 69, or the local law that applies). The sheet lists every flag of the event, whatever the filters.'
		],
		...(extras.rounds
			? [['Rounds', `Bids of round ${extras.rounds.to}; changes against round ${extras.rounds.from}`]]
			: [])
	]);
	for (const k of [6, 7]) about.getRow(k).getCell(2).numFmt = money;
	about.getColumn(1).width = 34;
	about.getColumn(2).width = 90;
	return Buffer.from(await workbook.xlsx.writeBuffer());
}
