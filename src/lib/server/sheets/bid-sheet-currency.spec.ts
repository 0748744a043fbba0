import ExcelJS from 'exceljs';
import { describe, expect, it } from 'vitest';
import {
	buildBidCsv,
	buildBidSheet,
	parseBidCsv,
	parseBidWorkbook,
	parseScreenPrices,
	type SheetEvent
} from './bid-sheet';

// An event in EUR that allows bids in USD and JPY (the codes of ISO 4217; the rates live on the event).
const event = (overrides: Partial<SheetEvent> = {}): SheetEvent => ({
	reference: 'EV-2027-FX',
	title: 'Three currencies',
	currency: 'EUR',
	bidValidityDays: 90,
	deadline: new Date('2027-03-01T12:00:00Z'),
	timeZone: 'Europe/Brussels',
	allowPriceBreaks: false,
	allowCapacity: false,
	allowBundles: true,
	bidCurrencies: ['USD', 'JPY'],
	items: [
		{ ref: 'IT-1', description: 'Case', lot: null, unit: 'C62', quantity: 100 },
		{ ref: 'IT-2', description: 'Film', lot: null, unit: 'KGM', quantity: 10 },
		{ ref: 'IT-3', description: 'Tape', lot: null, unit: 'C62', quantity: 5 }
	],
	...overrides
});

const header = 'Item ref,Description,Lot,Unit,Quantity,Unit price,Currency';

describe('the Currency column of the bid sheet', () => {
	it('is there only when the event allows other currencies, and the unit price header then names none', () => {
		expect(buildBidCsv(event()).split('\r\n')[0]).toBe(header);
		expect(buildBidCsv(event({ bidCurrencies: [] })).split('\r\n')[0]).toBe(
			'Item ref,Description,Lot,Unit,Quantity,Unit price (EUR)'
		);
	});

	it('reads the bid’s currency, and an empty cell as the event currency', () => {
		const usd = parseBidCsv(event(), [header, 'IT-1,x,,C62,100,2.5,usd', 'IT-2,x,,KGM,10,4,USD'].join('\n'));
		expect(usd).toEqual({
			ok: true,
			bid: {
				lines: [
					{ item: 'IT-1', unitPrice: 2.5, maxQuantity: null, priceBreaks: [] },
					{ item: 'IT-2', unitPrice: 4, maxQuantity: null, priceBreaks: [] }
				],
				capacity: null,
				bundles: [],
				currency: 'USD'
			}
		});
		const eur = parseBidCsv(event(), [header, 'IT-1,x,,C62,100,2.5,', 'IT-2,x,,KGM,10,4,EUR'].join('\n'));
		expect(eur.ok && eur.bid.currency).toBeUndefined();
	});

	it('names every cell with a currency the event does not allow, or one that differs from the bid’s first', () => {
		const parsed = parseBidCsv(
			event(),
			[header, 'IT-1,x,,C62,100,2.5,USD', 'IT-2,x,,KGM,10,4,GBP', 'IT-3,x,,C62,5,1,'].join('\n')
		);
		expect(parsed.ok ? null : parsed.problems).toEqual([
			{
				sheet: 'CSV',
				row: 3,
				column: 'G',
				message: '"GBP" is not a currency of this event: use EUR, USD, JPY (empty means EUR)'
			},
			{
				sheet: 'CSV',
				row: 4,
				column: 'G',
				message: 'EUR (empty) differs from USD on row 2: every price of one bid is in one currency'
			}
		]);
	});

	it('writes the column into the workbook, unlocked, with a list of the allowed codes, and reads it back', async () => {
		const bytes = await buildBidSheet(event(), 'Supplier One');
		const workbook = new ExcelJS.Workbook();
		await workbook.xlsx.load(bytes as unknown as ArrayBuffer);
		const prices = workbook.getWorksheet('Prices')!;
		expect(prices.getCell('G1').value).toBe('Currency');
		expect(prices.getCell('G2').protection?.locked).toBe(false);
		const validations = (
			prices as unknown as {
				dataValidations: { model: Record<string, { type: string; formulae: string[] }> };
			}
		).dataValidations.model;
		expect(Object.values(validations).find((v) => v.type === 'list')?.formulae).toEqual(['"EUR,USD,JPY"']);
		prices.getCell('F2').value = 1200;
		prices.getCell('G2').value = 'JPY';
		prices.getCell('F3').value = 300;
		prices.getCell('G3').value = 'XYZ';
		const refused = await parseBidWorkbook(event(), Buffer.from(await workbook.xlsx.writeBuffer()));
		expect(refused).toEqual({
			ok: false,
			problems: [
				{
					sheet: 'Prices',
					row: 3,
					column: 'G',
					message: '"XYZ" is not a currency of this event: use EUR, USD, JPY (empty means EUR)'
				}
			]
		});
		prices.getCell('G3').value = 'JPY';
		const read = await parseBidWorkbook(event(), Buffer.from(await workbook.xlsx.writeBuffer()));
		expect(read.ok && read.bid.currency).toBe('JPY');
	});

	it('takes the on-screen bid’s one currency for every row, and refuses one the event does not allow', () => {
		const screen = (currency: string | null) =>
			parseScreenPrices(event(), [{ item: 'IT-1', cells: ['2.5'] }], null, currency);
		const usd = screen('USD');
		expect(usd.ok && usd.bid.currency).toBe('USD');
		expect(screen('CHF')).toEqual({
			ok: false,
			problems: [
				{
					sheet: 'On-screen prices',
					row: 2,
					column: 'G',
					message: '"CHF" is not a currency of this event: use EUR, USD, JPY (empty means EUR)'
				}
			]
		});
	});
});
