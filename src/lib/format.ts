// Numbers as people read them: thousands separators, a currency's own minor units (ISO 4217: JPY 0, EUR 2,
// BHD 3, as Intl reports them), unit prices with up to four more decimals than the currency (bids price
// small parts in fractions of a cent), quantities without trailing zeros, shares, changes and times. The
// amounts live in award/core/money.ts, where the engine's own sentences use them too.
import { formatMoney, formatter, formatUnitPrice, minorUnits } from './award/core/money';
import { formatInZone } from './time';

export { formatMoney, formatUnitPrice, minorUnits };

/** A quantity: grouped, up to six decimals, none when whole ("1,910", "12.5"). */
export function formatQuantity(value: number): string {
	return formatter('quantity', () => new Intl.NumberFormat('en', { maximumFractionDigits: 6 })).format(value);
}

/** A share (0.125) as "12.5%". */
export function formatShare(share: number, digits = 1): string {
	return formatter(
		`share|${digits}`,
		() =>
			new Intl.NumberFormat('en', {
				style: 'percent',
				minimumFractionDigits: digits,
				maximumFractionDigits: digits
			})
	).format(share);
}

/** A relative change (0.042) as "+4.2%", with a true minus sign ("−3.0%") and "±0.0%" for none. */
export function formatChange(share: number, digits = 1): string {
	const text = formatShare(Math.abs(share), digits);
	if (text === formatShare(0, digits)) return `±${text}`;
	return `${share > 0 ? '+' : '−'}${text}`;
}

/** A difference in money with its sign: "+1,250.00", "−310.50" (a true minus sign), "±0.00" for none. */
export function formatMoneyChange(value: number, currency: string): string {
	const text = formatMoney(Math.abs(value), currency);
	if (text === formatMoney(0, currency)) return `±${text}`;
	return `${value > 0 ? '+' : '−'}${text}`;
}

/** Excel number formats for the same shapes (thousands separators, the currency's decimals). */
export function excelMoneyFormat(currency: string): string {
	const digits = minorUnits(currency);
	return digits ? `#,##0.${'0'.repeat(digits)}` : '#,##0';
}

/** At least one decimal even for a currency without minor units: a format ending in "." shows a dot. */
export function excelUnitPriceFormat(currency: string): string {
	const digits = Math.max(1, minorUnits(currency));
	return `#,##0.${'0'.repeat(digits)}${'#'.repeat(4)}`;
}

/** Whole quantities without a decimal point, others with three to six decimals. */
export function excelQuantityFormat(value: number): string {
	return Number.isInteger(value) ? '#,##0' : '#,##0.000###';
}

/** One format for a column of quantities: whole numbers when every one is whole. */
export function excelQuantityColumnFormat(values: Iterable<number>): string {
	for (const v of values) if (!Number.isInteger(v)) return excelQuantityFormat(v);
	return excelQuantityFormat(0);
}

export const EXCEL_SHARE_FORMAT = '0.0%';

/**
 * A moment as people read it, to the minute, in a time zone named beside it: "2027-03-01 17:00
 * (Europe/Berlin)". Event times use the event's zone, so a supplier abroad reads the deadline as the
 * buyer set it.
 */
export function formatTime(at: Date | string, timeZone: string, options: { seconds?: boolean } = {}): string {
	return `${formatInZone(at instanceof Date ? at : new Date(at), timeZone, options.seconds)} (${timeZone})`;
}

/** A solve's outcome in a buyer's words, short enough for a list of runs. */
export function outcomeLabel(status: string | null | undefined): string {
	const words: Record<string, string> = {
		optimal: 'best possible',
		feasible: 'keeps every rule, not proven best',
		infeasible: 'no allocation keeps every rule',
		no_solution_in_time: 'nothing found in time',
		unbounded: 'the problem is incomplete',
		solver_error: 'the solver failed',
		invalid_input: 'the problem is invalid'
	};
	return status ? (words[status] ?? status) : '';
}

/**
 * Short names of the UN/CEFACT Recommendation 20 codes people meet most (names as the recommendation
 * gives them, shortened: "one" is a unit); any other code is shown as it is.
 */
const UNIT_NAMES: Record<string, string> = {
	C62: 'units',
	H87: 'pieces',
	EA: 'each',
	SET: 'sets',
	PR: 'pairs',
	KGM: 'kg',
	TNE: 't',
	MTR: 'm',
	MTK: 'm²',
	MTQ: 'm³',
	LTR: 'l',
	HUR: 'h',
	DAY: 'days',
	MON: 'months',
	KWH: 'kWh'
};

/** A unit code as people read it: "units" for C62, "kg" for KGM; an unknown code as given. */
export function unitName(code: string): string {
	return UNIT_NAMES[code] ?? code;
}

/** A quantity with its unit: "2,360 units", "12.5 kg". */
export function formatQuantityIn(value: number, unitCode: string): string {
	return `${formatQuantity(value)} ${unitName(unitCode)}`;
}
