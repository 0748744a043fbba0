// Dates in an event's own time zone (IANA names), for forms and display; stored times are UTC.

// One formatter per zone: making an Intl.DateTimeFormat costs far more than using it (it was 5-7% of the
// web server's time on a list of events). An unknown zone throws here, as before, and is not kept.
const formatters = new Map<string, Intl.DateTimeFormat>();

function formatterFor(timeZone: string): Intl.DateTimeFormat {
	let formatter = formatters.get(timeZone);
	if (!formatter) {
		formatter = new Intl.DateTimeFormat('en-GB', {
			timeZone,
			hourCycle: 'h23',
			year: 'numeric',
			month: '2-digit',
			day: '2-digit',
			hour: '2-digit',
			minute: '2-digit',
			second: '2-digit'
		});
		if (formatters.size < 1000) formatters.set(timeZone, formatter);
	}
	return formatter;
}

function partsIn(date: Date, timeZone: string): Record<string, number> {
	const parts = formatterFor(timeZone).formatToParts(date);
	return Object.fromEntries(parts.filter((p) => p.type !== 'literal').map((p) => [p.type, Number(p.value)]));
}

/** "2027-03-01T17:00" as the wall clock shows it in the zone: the value of a datetime-local input. */
export function toLocalInput(date: Date, timeZone: string): string {
	const p = partsIn(date, timeZone);
	const pad = (n: number) => String(n).padStart(2, '0');
	return `${p.year}-${pad(p.month!)}-${pad(p.day!)}T${pad(p.hour!)}:${pad(p.minute!)}`;
}

/** "2027-03-01 17:00" in the zone; with `seconds`, "2027-03-01 17:00:05" (receipts, the trail). */
export function formatInZone(date: Date, timeZone: string, seconds = false): string {
	const minutes = toLocalInput(date, timeZone).replace('T', ' ');
	if (!seconds) return minutes;
	return `${minutes}:${String(partsIn(date, timeZone).second).padStart(2, '0')}`;
}

/** A wall-clock time the zone never shows (clocks go forward) or shows twice (clocks go back). */
export class LocalTimeError extends Error {
	constructor(
		message: string,
		readonly kind: 'gap' | 'overlap'
	) {
		super(message);
		this.name = 'LocalTimeError';
	}
}

const MINUTE = 60_000;
const DAY = 24 * 60 * MINUTE;

/** The zone's offset from UTC at an instant, in ms (wall clock minus UTC), from Intl's time zone data. */
function offsetAt(at: number, timeZone: string): number {
	const p = partsIn(new Date(at), timeZone);
	return (
		Date.UTC(p.year!, p.month! - 1, p.day!, p.hour!, p.minute!, p.second!) - Math.floor(at / 1000) * 1000
	);
}

/**
 * Every instant at which the zone's wall clock shows `local` ("2027-03-28T02:30"), earliest first: one
 * on most days, none in a gap when the clocks go forward, two in an overlap when they go back. The
 * candidates are the wall time less the offset a day before and a day after (time zone rules never change
 * twice within two days); a candidate counts when the zone shows the wall time at it. This is how the
 * ECMAScript Temporal proposal's GetPossibleInstantsFor works.
 */
export function instantsAt(local: string, timeZone: string): Date[] {
	const [date, time] = local.split('T') as [string, string];
	const [y, m, d] = date.split('-').map(Number) as [number, number, number];
	const [h, min] = time.split(':').map(Number) as [number, number];
	const wall = Date.UTC(y, m - 1, d, h, min);
	const offsets = new Set([offsetAt(wall - DAY, timeZone), offsetAt(wall + DAY, timeZone)]);
	const found = [...offsets]
		.map((offset) => wall - offset)
		.filter((at) => at + offsetAt(at, timeZone) === wall)
		.sort((a, b) => a - b);
	return [...new Set(found)].map((at) => new Date(at));
}

/**
 * The instant at which the zone's wall clock shows `local`. A deadline must name one moment: a time that
 * does not exist that day (the clocks go forward) or that happens twice (they go back) throws a
 * LocalTimeError saying so, for the form to show beside the field.
 */
export function fromLocalInput(local: string, timeZone: string): Date {
	const found = instantsAt(local, timeZone);
	if (found.length === 1) return found[0]!;
	const shown = local.replace('T', ' ');
	if (!found.length)
		throw new LocalTimeError(
			`${shown} does not exist in ${timeZone}: the clocks go forward then. Choose a time outside the change, such as an hour later.`,
			'gap'
		);
	throw new LocalTimeError(
		`${shown} happens twice in ${timeZone}: the clocks go back then. Choose a time outside the repeated hour.`,
		'overlap'
	);
}
