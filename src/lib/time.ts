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

/** "2027-03-01 17:00" in the zone. */
export function formatInZone(date: Date, timeZone: string): string {
	return toLocalInput(date, timeZone).replace('T', ' ');
}

/** The instant at which the zone's wall clock shows the given local time (the later one in a DST gap). */
export function fromLocalInput(local: string, timeZone: string): Date {
	const [date, time] = local.split('T') as [string, string];
	const [y, m, d] = date.split('-').map(Number) as [number, number, number];
	const [h, min] = time.split(':').map(Number) as [number, number];
	const wanted = Date.UTC(y, m - 1, d, h, min);
	let guess = wanted;
	for (let k = 0; k < 3; k++) {
		const p = partsIn(new Date(guess), timeZone);
		const shown = Date.UTC(p.year!, p.month! - 1, p.day!, p.hour!, p.minute!);
		if (shown === wanted) break;
		guess += wanted - shown;
	}
	return new Date(guess);
}
