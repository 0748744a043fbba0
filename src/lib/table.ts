// Sorting and filtering the rows of a data table (components/DataTable.svelte) in the browser.
export interface Column<R> {
	key: string;
	label: string;
	/** Right-aligned, tabular figures. */
	numeric?: boolean;
	/** The value the column sorts by; a column without one does not sort. */
	sortBy?: (row: R) => string | number | null | undefined;
	/** The text the filter box searches; columns without one are not searched. */
	text?: (row: R) => string;
	/** A class for the column's cells (width, wrapping). */
	class?: string;
}

/** Sorts a copy: numbers by value, text by the locale's collation; rows without a value go last. */
export function sortRows<R>(rows: readonly R[], by: (row: R) => unknown, dir: 'asc' | 'desc'): R[] {
	const collator = new Intl.Collator(undefined, { numeric: true, sensitivity: 'base' });
	const sign = dir === 'asc' ? 1 : -1;
	return rows
		.map((row, index) => ({ row, index, value: by(row) }))
		.sort((a, b) => {
			const [x, y] = [a.value, b.value];
			const missing = (v: unknown) => v === null || v === undefined || v === '';
			if (missing(x) || missing(y))
				return missing(x) === missing(y) ? a.index - b.index : missing(x) ? 1 : -1;
			const order =
				typeof x === 'number' && typeof y === 'number' ? x - y : collator.compare(String(x), String(y));
			return order === 0 ? a.index - b.index : sign * order;
		})
		.map((entry) => entry.row);
}

/** The rows whose searched text holds every word of the query (case and accents ignored). */
export function filterRows<R>(rows: readonly R[], columns: readonly Column<R>[], query: string): R[] {
	const fold = (s: string) => s.normalize('NFKD').replace(/\p{M}/gu, '').toLocaleLowerCase();
	const words = fold(query).split(/\s+/).filter(Boolean);
	if (!words.length) return [...rows];
	const searched = columns.filter((c) => c.text);
	return rows.filter((row) => {
		const haystack = fold(searched.map((c) => c.text!(row)).join(' '));
		return words.every((w) => haystack.includes(w));
	});
}
