import { describe, expect, it } from 'vitest';
import { formatInZone, fromLocalInput, instantsAt, LocalTimeError, toLocalInput } from './time';

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

	// Daylight saving in 2027 by the IANA rules: the EU changes at 01:00 UTC on the last Sunday of March
	// (28 March, Berlin 02:00 -> 03:00) and of October (31 October, 03:00 -> 02:00); the United States at
	// 02:00 local time on the second Sunday of March (14 March, 02:00 -> 03:00) and the first Sunday of
	// November (7 November, 02:00 -> 01:00), by the Energy Policy Act of 2005.
	describe('across daylight-saving changes', () => {
		const iso = (local: string, zone: string) => instantsAt(local, zone).map((d) => d.toISOString());

		it('finds no instant in the hour the clocks skip, and refuses it as a deadline with the reason', () => {
			expect(iso('2027-03-28T02:30', 'Europe/Berlin')).toEqual([]);
			expect(iso('2027-03-14T02:30', 'America/New_York')).toEqual([]);
			expect(() => fromLocalInput('2027-03-28T02:30', 'Europe/Berlin')).toThrow(LocalTimeError);
			expect(() => fromLocalInput('2027-03-28T02:30', 'Europe/Berlin')).toThrow(
				'2027-03-28 02:30 does not exist in Europe/Berlin: the clocks go forward then.'
			);
		});

		it('finds both instants of the hour the clocks repeat, and refuses it as a deadline', () => {
			expect(iso('2027-10-31T02:30', 'Europe/Berlin')).toEqual([
				'2027-10-31T00:30:00.000Z',
				'2027-10-31T01:30:00.000Z'
			]);
			expect(iso('2027-11-07T01:30', 'America/New_York')).toEqual([
				'2027-11-07T05:30:00.000Z',
				'2027-11-07T06:30:00.000Z'
			]);
			expect(() => fromLocalInput('2027-11-07T01:30', 'America/New_York')).toThrow(
				'2027-11-07 01:30 happens twice in America/New_York: the clocks go back then.'
			);
		});

		it('converts the minutes either side of each change exactly', () => {
			const at = (local: string, zone: string) => fromLocalInput(local, zone).toISOString();
			expect(at('2027-03-28T01:59', 'Europe/Berlin')).toBe('2027-03-28T00:59:00.000Z');
			expect(at('2027-03-28T03:00', 'Europe/Berlin')).toBe('2027-03-28T01:00:00.000Z');
			expect(at('2027-10-31T01:59', 'Europe/Berlin')).toBe('2027-10-30T23:59:00.000Z');
			expect(at('2027-10-31T03:00', 'Europe/Berlin')).toBe('2027-10-31T02:00:00.000Z');
			expect(at('2027-03-14T01:59', 'America/New_York')).toBe('2027-03-14T06:59:00.000Z');
			expect(at('2027-03-14T03:00', 'America/New_York')).toBe('2027-03-14T07:00:00.000Z');
			expect(at('2027-11-07T00:59', 'America/New_York')).toBe('2027-11-07T04:59:00.000Z');
			expect(at('2027-11-07T02:00', 'America/New_York')).toBe('2027-11-07T07:00:00.000Z');
		});

		it('shows each instant of a repeated hour as the wall clock does, and round-trips every other one', () => {
			expect(formatInZone(new Date('2027-10-31T00:30:00Z'), 'Europe/Berlin')).toBe('2027-10-31 02:30');
			expect(formatInZone(new Date('2027-10-31T01:30:00Z'), 'Europe/Berlin')).toBe('2027-10-31 02:30');
			for (let hour = 0; hour < 72; hour++) {
				const at = new Date(Date.UTC(2027, 9, 30, 0, 15) + hour * 3_600_000);
				const local = toLocalInput(at, 'Europe/Berlin');
				const found = instantsAt(local, 'Europe/Berlin').map((d) => d.getTime());
				expect(found).toContain(at.getTime());
			}
		});
	});
});
