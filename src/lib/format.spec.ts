// Minor units are ISO 4217's (JPY 0, EUR 2, BHD 3, as DOMAIN.md lists them); the grouping is the English
// convention Intl.NumberFormat('en') applies (a comma every three digits, a point before the decimals).
import { describe, expect, it } from 'vitest';
import {
	formatChange,
	formatMoney,
	formatMoneyChange,
	formatQuantity,
	formatQuantityIn,
	formatShare,
	formatTime,
	formatUnitPrice,
	minorUnits,
	outcomeLabel,
	unitName
} from './format';

describe('number formats', () => {
	it('uses each currency’s minor units (ISO 4217)', () => {
		expect([minorUnits('JPY'), minorUnits('EUR'), minorUnits('BHD')]).toEqual([0, 2, 3]);
		expect(formatMoney(3248729.094, 'EUR')).toBe('3,248,729.09');
		expect(formatMoney(3248729.5, 'JPY')).toBe('3,248,730');
		expect(formatMoney(12.3456, 'BHD')).toBe('12.346');
	});

	it('keeps a unit price’s extra decimals, up to four beyond the currency’s', () => {
		expect(formatUnitPrice(1.203, 'EUR')).toBe('1.203');
		expect(formatUnitPrice(0.5, 'EUR')).toBe('0.50');
		expect(formatUnitPrice(1.123456789, 'EUR')).toBe('1.123457');
	});

	it('groups quantities and drops trailing zeros', () => {
		expect(formatQuantity(1910)).toBe('1,910');
		expect(formatQuantity(3643.5)).toBe('3,643.5');
	});

	it('writes shares and changes with a sign', () => {
		expect(formatShare(0.125)).toBe('12.5%');
		expect(formatChange(0.042)).toBe('+4.2%');
		expect(formatChange(-0.03)).toBe('−3.0%');
		expect(formatChange(0.00001)).toBe('±0.0%');
	});

	it('signs a difference in money in the currency’s minor units', () => {
		expect(formatMoneyChange(1250, 'EUR')).toBe('+1,250.00');
		expect(formatMoneyChange(-310.5, 'EUR')).toBe('−310.50');
		expect(formatMoneyChange(0.004, 'EUR')).toBe('±0.00');
		expect(formatMoneyChange(-1234.4, 'JPY')).toBe('−1,234');
	});

	it('writes a negative amount with a minus sign before the digits', () => {
		expect(formatMoney(-1234.5, 'EUR')).toBe('-1,234.50');
		expect(formatMoney(-0.0004, 'BHD')).toBe('0.000');
	});

	// UN/CEFACT Recommendation 20: C62 "one", KGM kilogram, PR pair; other codes stay as given.
	it('names the common units and leaves other codes as they are', () => {
		expect(formatQuantityIn(2360, 'C62')).toBe('2,360 units');
		expect(formatQuantityIn(12.5, 'KGM')).toBe('12.5 kg');
		expect(unitName('PR')).toBe('pairs');
		expect(unitName('XBX')).toBe('XBX');
	});

	it('says a solve’s outcome in a buyer’s words', () => {
		expect(outcomeLabel('optimal')).toBe('best possible');
		expect(outcomeLabel('infeasible')).toBe('no allocation keeps every rule');
		expect(outcomeLabel(null)).toBe('');
	});
});

// Offsets from the IANA time zone database: Berlin on CET (+01:00) until 01:00 UTC on the last Sunday of
// March 2027 (28 March), on CEST (+02:00) after; Tokyo on +09:00 all year.
describe('times', () => {
	it('writes a moment on the zone’s wall clock with the zone named, either side of a clock change', () => {
		expect(formatTime(new Date('2027-03-28T00:59:00Z'), 'Europe/Berlin')).toBe(
			'2027-03-28 01:59 (Europe/Berlin)'
		);
		expect(formatTime(new Date('2027-03-28T01:00:00Z'), 'Europe/Berlin')).toBe(
			'2027-03-28 03:00 (Europe/Berlin)'
		);
		expect(formatTime('2027-03-28T01:00:07.250Z', 'Asia/Tokyo', { seconds: true })).toBe(
			'2027-03-28 10:00:07 (Asia/Tokyo)'
		);
	});
});
