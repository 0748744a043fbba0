import { describe, expect, it } from 'vitest';
import {
	convertAmount,
	convertPrice,
	isBidCurrency,
	minorUnits,
	parseRateTable,
	rateChanges,
	rateFor,
	rateTableText,
	roundHalfAway,
	toMinorUnit
} from './currencies';

describe('currencies', () => {
	it('gives the minor units of ISO 4217, also where Intl (CLDR) differs', () => {
		// ISO 4217 list one (published 2024-06-25): EUR 2, JPY 0, BHD 3, IQD 3, HUF 2, IDR 2.
		expect(['EUR', 'JPY', 'BHD', 'IQD', 'HUF', 'IDR'].map(minorUnits)).toEqual([2, 0, 3, 3, 2, 2]);
	});

	it('rounds halves away from zero, without the binary noise of the product', () => {
		// Half away from zero (common practice in commercial rounding): 2.5 → 3, −2.5 → −3, 1.005 → 1.01
		// (1.005 × 100 is 100.49999999999999 in binary floating point).
		expect([roundHalfAway(2.5, 0), roundHalfAway(-2.5, 0), roundHalfAway(1.005, 2)]).toEqual([3, -3, 1.01]);
		expect(toMinorUnit(1234.5, 'JPY')).toBe(1235);
		expect(toMinorUnit(0.0005, 'BHD')).toBe(0.001);
	});

	it('converts at the fixed rate: prices at six decimals, amounts at the event currency’s minor unit', () => {
		// 2.345678 USD × 0.9213 = 2.1610731214 → 2.161073 (six decimals);
		// 1234.56 USD × 0.9213 = 1137.400128 → 1137.40 EUR; 15555 JPY × 0.0061 = 94.8855 → 94.89 EUR.
		expect(convertPrice(2.345678, 0.9213)).toBe(2.161073);
		expect(convertAmount(1234.56, 0.9213, 'EUR')).toBe(1137.4);
		expect(convertAmount(15555, 0.0061, 'EUR')).toBe(94.89);
	});

	it('knows the event currency at rate 1 and no rate for a currency the event does not allow', () => {
		const rates = [{ currency: 'USD', rate: 0.9213, source: 'reference rate', rateDate: '2026-12-01' }];
		expect([
			rateFor('EUR', 'EUR', rates),
			rateFor('USD', 'EUR', rates),
			rateFor('GBP', 'EUR', rates)
		]).toEqual([1, 0.9213, undefined]);
		expect([isBidCurrency('USD'), isBidCurrency('XAU'), isBidCurrency('usd'), isBidCurrency('ABC')]).toEqual([
			true,
			false,
			false,
			false
		]);
		// The CFA francs (XOF, XAF) and the East Caribbean dollar (XCD) are currencies of ISO 4217 list one
		// with two decimals and zero (XOF, XAF 0; XCD 2): their X does not make them metals or test codes.
		expect(['XOF', 'XAF', 'XCD', 'XDR', 'XTS'].map(isBidCurrency)).toEqual([true, true, true, false, false]);
		expect(['XOF', 'XCD'].map(minorUnits)).toEqual([0, 2]);
	});

	it('reads the buyer’s rate table line by line and names every bad line', () => {
		expect(
			parseRateTable('usd 0.9213 2026-12-01 central bank reference rate\n\nJPY 0.0061 2026-12-01 same', 'EUR')
		).toEqual({
			ok: true,
			rates: [
				{ currency: 'USD', rate: 0.9213, source: 'central bank reference rate', rateDate: '2026-12-01' },
				{ currency: 'JPY', rate: 0.0061, source: 'same', rateDate: '2026-12-01' }
			]
		});
		expect(parseRateTable('EUR 1 2026-12-01 x\nUSD 0,92 2026-13-01 x\nABC 1 2026-12-01 x', 'EUR')).toEqual({
			ok: false,
			problems: [
				'Line 1: EUR is the event currency; it needs no rate.',
				'Line 2: "0,92" is not a rate; write a number above 0 with a decimal point, such as 0.92.',
				'Line 2: "2026-13-01" is not a date; write it as YYYY-MM-DD.',
				'Line 3: "ABC" is not an ISO 4217 currency code.'
			]
		});
	});

	// The table is numeric(24,10) (migration 20261209010000): a longer rate would be stored rounded, so the
	// trail and the mail would show one rate and the runs use another.
	it('refuses a rate with more decimals than the table keeps, and writes small rates back readably', () => {
		expect(parseRateTable('IDR 0.00005812345678 2026-12-01 x', 'EUR')).toEqual({
			ok: false,
			problems: ['Line 1: "0.00005812345678" has more than 10 decimals.']
		});
		// 1e-7 is how JavaScript prints 0.0000001; the form must read back what it shows.
		const text = rateTableText([{ currency: 'VND', rate: 0.0000001, source: 'x', rateDate: '2026-12-01' }]);
		expect(text).toBe('VND 0.0000001 2026-12-01 x');
		expect(parseRateTable(text, 'EUR')).toMatchObject({ ok: true, rates: [{ rate: 0.0000001 }] });
	});

	it('lists an amendment’s changed rates and the currencies it would withdraw', () => {
		const usd = { currency: 'USD', rate: 0.9213, source: 'reference rate', rateDate: '2026-12-01' };
		const jpy = { currency: 'JPY', rate: 0.0061, source: 'reference rate', rateDate: '2026-12-01' };
		expect(rateChanges([usd, jpy], [{ ...usd, rate: 0.93, rateDate: '2026-12-08' }, jpy], 'EUR')).toEqual({
			removed: [],
			changed: true,
			lines: [
				'Exchange rate 1 USD = 0.93 EUR (reference rate, 2026-12-08), was 0.9213 (reference rate, 2026-12-01)'
			]
		});
		expect(rateChanges([usd, jpy], [usd], 'EUR').removed).toEqual(['JPY']);
		expect(rateChanges([usd], [usd], 'EUR').changed).toBe(false);
	});
});
