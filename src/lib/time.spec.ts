import { describe, expect, it } from 'vitest';
import { formatInZone, fromLocalInput, toLocalInput } from './time';

// Offsets from the IANA time zone database (Europe/Berlin: CET +01:00, CEST +02:00 from the last Sunday
// of March; America/New_York: EST -05:00), as the Intl API of Node ships them.
describe('event time zones', () => {
	it('reads a wall-clock time in the zone as the right instant', () => {
		expect(fromLocalInput('2027-01-15T17:00', 'Europe/Berlin').toISOString()).toBe(
			'2027-01-15T16:00:00.000Z'
		);
		expect(fromLocalInput('2027-07-15T17:00', 'Europe/Berlin').toISOString()).toBe(
			'2027-07-15T15:00:00.000Z'
		);
		expect(fromLocalInput('2027-01-15T09:30', 'America/New_York').toISOString()).toBe(
			'2027-01-15T14:30:00.000Z'
		);
		expect(fromLocalInput('2027-01-15T09:30', 'UTC').toISOString()).toBe('2027-01-15T09:30:00.000Z');
	});

	it('shows an instant as the zone shows it, and round-trips', () => {
		const at = new Date('2027-03-01T16:00:00Z');
		expect(formatInZone(at, 'Europe/Berlin')).toBe('2027-03-01 17:00');
		expect(fromLocalInput(toLocalInput(at, 'Asia/Tokyo'), 'Asia/Tokyo').getTime()).toBe(at.getTime());
	});
});
