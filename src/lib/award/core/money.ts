// Amounts in a currency as people read them: thousands separators and the currency's own minor units
// (ISO 4217: JPY 0, EUR 2, BHD 3, as Intl reports them). Here, pure, so the engine's sentences use them;
// the app reads them through $lib/format, beside quantities, shares and times. One formatter per shape
// and currency: making an Intl.NumberFormat costs far more than using it.
import { code as iso4217, publishDate } from 'currency-codes';

const formatters = new Map<string, Intl.NumberFormat>();

/** The cached formatter of `key`, made by `make` the first time. */
export function formatter(key: string, make: () => Intl.NumberFormat): Intl.NumberFormat {
	let found = formatters.get(key);
	if (!found) {
		found = make();
		if (formatters.size < 1000) formatters.set(key, found);
	}
	return found;
}

const minor = new Map<string, number>();

/**
 * Decimals of the currency's minor unit as ISO 4217 gives them (list one as the maintenance agency
 * published it, shipped in the npm package currency-codes; its date is `ISO_4217_PUBLISHED`). Intl is not
 * used for this: CLDR gives some currencies the digits of their cash (HUF 0, IQD 0, IDR 0, where ISO 4217
 * says 2, 3, 2). A code ISO 4217 does not list gets Intl's digits, else 2.
 */
export function minorUnits(currency: string): number {
	let digits = minor.get(currency);
	if (digits === undefined) {
		digits = /^[A-Z]{3}$/.test(currency) ? iso4217(currency)?.digits : undefined;
		if (digits === undefined) {
			try {
				digits = new Intl.NumberFormat('en', { style: 'currency', currency }).resolvedOptions()
					.maximumFractionDigits!;
			} catch {
				digits = 2;
			}
		}
		if (minor.size < 1000) minor.set(currency, digits);
	}
	return digits;
}

/** The date of the ISO 4217 list the minor units come from. */
export const ISO_4217_PUBLISHED = publishDate;

/** An amount in the currency's minor units: "3,248,729.09" (the code is shown beside it, once). */
export function formatMoney(value: number, currency: string): string {
	const digits = minorUnits(currency);
	return formatter(
		`money|${digits}`,
		() =>
			new Intl.NumberFormat('en', {
				minimumFractionDigits: digits,
				maximumFractionDigits: digits,
				// No "-0.00" for an amount that rounds to zero.
				signDisplay: 'negative'
			})
	).format(value);
}

/** A unit price: at least the currency's minor units, up to four more where the bid has them. */
export function formatUnitPrice(value: number, currency: string): string {
	const digits = minorUnits(currency);
	return formatter(
		`unit|${digits}`,
		() => new Intl.NumberFormat('en', { minimumFractionDigits: digits, maximumFractionDigits: digits + 4 })
	).format(value);
}
