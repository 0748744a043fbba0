// Bids in other currencies than the event's: each allowed currency has a rate fixed before bids arrive
// (event-currency units per one unit of the bid currency, with its source and date). Every comparison,
// rule and run uses the converted amount; the supplier's own amount is kept beside it. Pure, so the pages,
// the sheets, the services and their tests share one definition.
import { code as iso4217 } from 'currency-codes';
import { minorUnits } from './award/core/money';

export { minorUnits };

export interface EventRate {
	/** ISO 4217 code of the bid currency. */
	currency: string;
	/** Event-currency units per one unit of `currency`. */
	rate: number;
	/** Where the rate comes from, such as "central bank reference rate". */
	source: string;
	/** The day the rate is of, YYYY-MM-DD. */
	rateDate: string;
}

/**
 * The codes of ISO 4217 list one with no minor unit ("N.A."): precious metals, the SDR, bond-market and
 * settlement units, and the codes for testing and for "no currency". Nobody prices goods in them. The
 * franc zones' XAF, XOF, XPF and the East Caribbean XCD are currencies and stay allowed.
 */
const NOT_FOR_PRICES = new Set([
	'XAG',
	'XAU',
	'XBA',
	'XBB',
	'XBC',
	'XBD',
	'XDR',
	'XPD',
	'XPT',
	'XSU',
	'XTS',
	'XUA',
	'XXX'
]);

/** A code of ISO 4217 list one (npm currency-codes) that prices can be in. */
export function isBidCurrency(code: string): boolean {
	return /^[A-Z]{3}$/.test(code) && iso4217(code) !== undefined && !NOT_FOR_PRICES.has(code);
}

/** `value` at `digits` decimals, halves away from zero (common practice in commercial rounding). */
export function roundHalfAway(value: number, digits: number): number {
	const factor = 10 ** digits;
	// toPrecision(15) takes off the binary noise of the product (1.005 * 100 = 100.49999999999999).
	const scaled = Number((Math.abs(value) * factor).toPrecision(15));
	const rounded = Math.round(scaled) / factor;
	return value < 0 ? -rounded : rounded;
}

/** An amount at the currency's ISO 4217 minor unit (JPY 0, EUR 2, BHD 3), halves away from zero. */
export const toMinorUnit = (amount: number, currency: string) => roundHalfAway(amount, minorUnits(currency));

/** The rate of a bid currency in the event's terms: 1 for the event's own currency, undefined when not allowed. */
export function rateFor(
	code: string,
	eventCurrency: string,
	rates: readonly EventRate[]
): number | undefined {
	if (code === eventCurrency) return 1;
	return rates.find((r) => r.currency === code)?.rate;
}

/**
 * A unit price (or bundle price) in the event currency, at six decimals as the engine takes prices: the
 * supplier's price times the fixed rate. Amounts shown are rounded to the minor unit only at the end.
 */
export const convertPrice = (price: number, rate: number) => roundHalfAway(price * rate, 6);

/** An amount in the bid currency, converted and rounded to the event currency's minor unit. */
export const convertAmount = (amount: number, rate: number, eventCurrency: string) =>
	toMinorUnit(amount * rate, eventCurrency);

/** Every currency a bid may use: the event's first, then the others in the order the buyer listed them. */
export const allowedCurrencies = (eventCurrency: string, rates: readonly EventRate[]) => [
	eventCurrency,
	...rates.map((r) => r.currency).filter((c) => c !== eventCurrency)
];

/**
 * The buyer's rate table as typed, one rate per line: "USD 0.92 2026-12-01 central bank reference rate".
 * Every problem is named with its line, so a table with a bad line changes nothing.
 */
export function parseRateTable(
	text: string,
	eventCurrency: string
): { ok: true; rates: EventRate[] } | { ok: false; problems: string[] } {
	const rates: EventRate[] = [];
	const problems: string[] = [];
	text.split(/\r?\n/).forEach((raw, index) => {
		const line = raw.trim();
		if (!line) return;
		const where = `Line ${index + 1}`;
		const match = /^(\S+)\s+(\S+)\s+(\S+)\s+(.+)$/.exec(line);
		if (!match) {
			problems.push(
				`${where}: write the code, the rate, its date and its source, such as "USD 0.92 2026-12-01 central bank reference rate".`
			);
			return;
		}
		const [, rawCode, rawRate, rateDate, source] = match as unknown as [
			string,
			string,
			string,
			string,
			string
		];
		const code = rawCode.toUpperCase();
		if (!isBidCurrency(code))
			problems.push(`${where}: "${rawCode.slice(0, 10)}" is not an ISO 4217 currency code.`);
		else if (code === eventCurrency)
			problems.push(`${where}: ${code} is the event currency; it needs no rate.`);
		else if (rates.some((r) => r.currency === code)) problems.push(`${where}: ${code} is listed twice.`);
		const rate = /^\d+(\.\d+)?$/.test(rawRate) ? Number(rawRate) : NaN;
		if (!(rate > 0) || rate >= 1e14)
			problems.push(
				`${where}: "${rawRate.slice(0, 20)}" is not a rate; write a number above 0 with a decimal point, such as 0.92.`
			);
		// The table keeps ten decimals (numeric(24,10)): a longer rate would be stored other than typed.
		else if ((rawRate.split('.')[1] ?? '').length > RATE_DECIMALS)
			problems.push(`${where}: "${rawRate.slice(0, 20)}" has more than ${RATE_DECIMALS} decimals.`);
		const date = /^\d{4}-\d{2}-\d{2}$/.test(rateDate) ? new Date(`${rateDate}T00:00:00Z`) : null;
		if (!date || Number.isNaN(date.getTime()) || date.toISOString().slice(0, 10) !== rateDate)
			problems.push(`${where}: "${rateDate.slice(0, 20)}" is not a date; write it as YYYY-MM-DD.`);
		if (source.trim().length > 200) problems.push(`${where}: the source is longer than 200 characters.`);
		rates.push({ currency: code, rate, source: source.trim(), rateDate });
	});
	return problems.length ? { ok: false, problems } : { ok: true, rates };
}

/** The table as the buyer types it (parseRateTable's input). */
export const rateTableText = (rates: readonly EventRate[]) =>
	rates.map((r) => `${r.currency} ${rateText(r.rate)} ${r.rateDate} ${r.source}`).join('\n');

/** Decimals a rate keeps (the rate table's numeric(24,10)). */
export const RATE_DECIMALS = 10;

/** A rate in plain decimals, never in exponent form ("1e-7"), which the table does not read back. */
export const rateText = (rate: number) => rate.toFixed(RATE_DECIMALS).replace(/0+$/, '').replace(/\.$/, '');

/** "1 USD = 0.92 EUR (central bank reference rate, 2026-12-01)" */
export const describeRate = (rate: EventRate, eventCurrency: string) =>
	`1 ${rate.currency} = ${rateText(rate.rate)} ${eventCurrency} (${rate.source}, ${rate.rateDate})`;

/**
 * What an amendment changes in the rate table: the trail's before/after and the mail's lines. A currency
 * once allowed stays allowed after publication (bids may be in it already, and who bid in what is sealed),
 * so `removed` lists the codes the new table drops, for the caller to refuse.
 */
export function rateChanges(
	before: readonly EventRate[],
	after: readonly EventRate[],
	eventCurrency: string
): { removed: string[]; changed: boolean; lines: string[] } {
	const key = (r: EventRate) => `${r.currency}|${r.rate}|${r.rateDate}|${r.source}`;
	const was = new Map(before.map((r) => [r.currency, r]));
	const removed = before.filter((r) => !after.some((a) => a.currency === r.currency)).map((r) => r.currency);
	const lines = after
		.filter((r) => !was.has(r.currency) || key(was.get(r.currency)!) !== key(r))
		.map((r) => {
			const old = was.get(r.currency);
			return `Exchange rate ${describeRate(r, eventCurrency)}${old ? `, was ${old.rate} (${old.source}, ${old.rateDate})` : ', newly allowed'}`;
		});
	return { removed, changed: lines.length > 0 || removed.length > 0, lines };
}
