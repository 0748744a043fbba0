// Amounts in a currency as people read them: thousands separators and the currency's own minor units
// (ISO 4217: JPY 0, EUR 2, BHD 3, as Intl reports them). Here, pure, so the engine's sentences use them;
// the app reads them through $lib/format, beside quantities, shares and times. One formatter per shape
// and currency: making an Intl.NumberFormat costs far more than using it.
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
 * Where ISO 4217 and Intl (CLDR's "digits") disagree, ISO 4217's minor unit, from the maintenance agency's
 * list one published 2024-06-25 (as shipped in the npm package currency-codes 2.2.0, compared code by code
 * with Node 20's Intl on 2026-12-03). CLDR gives these 0 because cash has no coins; the codes ISO marks
 * "N.A." (XAU, XDR, XXX and the other X codes) are left as Intl has them.
 */
export const ISO_4217_MINOR_UNITS: Readonly<Record<string, number>> = {
	AFN: 2,
	ALL: 2,
	COP: 2,
	HUF: 2,
	IDR: 2,
	IQD: 3,
	IRR: 2,
	KPW: 2,
	LAK: 2,
	LBP: 2,
	MGA: 2,
	MMK: 2,
	PKR: 2,
	SOS: 2,
	SYP: 2,
	YER: 2
};

/** Decimals of the currency's minor unit, ISO 4217 (2 where neither ISO's list above nor Intl knows the code). */
export function minorUnits(currency: string): number {
	let digits = minor.get(currency) ?? ISO_4217_MINOR_UNITS[currency];
	if (digits === undefined) {
		try {
			digits = new Intl.NumberFormat('en', { style: 'currency', currency }).resolvedOptions()
				.maximumFractionDigits!;
		} catch {
			digits = 2;
		}
		if (minor.size < 1000) minor.set(currency, digits);
	}
	return digits;
}

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
