import { describe, expect, it } from 'vitest';
import { buildBidCsv, type SheetEvent } from './bid-sheet';
import { readBidFile } from './read-bid-file';

const event: SheetEvent = {
	reference: 'EV-1',
	title: 'Test',
	currency: 'EUR',
	bidValidityDays: 90,
	deadline: new Date('2027-03-01T12:00:00Z'),
	timeZone: 'Europe/Brussels',
	allowPriceBreaks: false,
	allowCapacity: false,
	allowBundles: false,
	items: [
		{ ref: 'IT-1', description: 'Case', lot: null, unit: 'C62', quantity: 10 },
		{ ref: 'IT-2', description: 'Film', lot: null, unit: 'KGM', quantity: 5 }
	]
};

const filledCsv = () =>
	Buffer.from(
		buildBidCsv(event)
			.trim()
			.split('\r\n')
			.map((line, k) => (k === 0 ? line : `${line},${k * 2.5}`))
			.join('\r\n')
	);

describe('reading a bid file on a worker thread', () => {
	it('reads a filled CSV into bid lines', async () => {
		const reading = await readBidFile(event, { name: 'bid.csv', bytes: filledCsv() });
		expect(reading.kind).toBe('csv');
		expect(reading.outcome).toEqual({
			ok: true,
			bid: {
				lines: [
					{ item: 'IT-1', unitPrice: 2.5, maxQuantity: null, priceBreaks: [] },
					{ item: 'IT-2', unitPrice: 5, maxQuantity: null, priceBreaks: [] }
				],
				capacity: null,
				bundles: []
			}
		});
	});

	it('returns the inspection refusal as the only problem', async () => {
		const reading = await readBidFile(event, { name: 'bid.xlsx', bytes: Buffer.from('%PDF-1.4\n') });
		expect(reading).toEqual({
			kind: null,
			outcome: {
				ok: false,
				problems: [expect.objectContaining({ sheet: '(file)', message: expect.stringMatching(/PDF/) })]
			}
		});
	});

	it('gives up on a file not read within the time limit, saying so', async () => {
		const reading = await readBidFile(event, { name: 'bid.csv', bytes: filledCsv() }, { timeoutMs: 1 });
		expect(reading.outcome.ok ? '' : reading.outcome.problems[0]!.message).toMatch(
			/^The file could not be read in time/
		);
	});
});
