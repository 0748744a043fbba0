// An event's exchange rates: the other currencies its bids may use, each at a rate fixed by the buyer.
// Once the event is published, the table changes only inside an amendment's transaction (database trigger
// event_rates_locked_at_publication).
import type { EventRate } from '$lib/currencies';
import type { Db } from './knex';

interface RateRow {
	event_id: string;
	currency: string;
	rate: string;
	source: string;
	rate_date: string | Date;
}

const dateText = (value: string | Date) =>
	typeof value === 'string' ? value.slice(0, 10) : value.toISOString().slice(0, 10);

export async function listRates(db: Db, eventId: string): Promise<EventRate[]> {
	const rows: RateRow[] = await db('event_rates')
		.where({ event_id: eventId })
		.select('*', db.raw(`to_char(rate_date, 'YYYY-MM-DD') as rate_date`))
		.orderBy('currency');
	return rows.map((r) => ({
		currency: r.currency,
		rate: Number(r.rate),
		source: r.source,
		rateDate: dateText(r.rate_date)
	}));
}

/** The whole table replaced by `rates`. */
export async function replaceRates(db: Db, eventId: string, rates: readonly EventRate[]): Promise<void> {
	await db('event_rates').where({ event_id: eventId }).delete();
	if (rates.length)
		await db('event_rates').insert(
			rates.map((r) => ({
				event_id: eventId,
				currency: r.currency,
				rate: String(r.rate),
				source: r.source,
				rate_date: r.rateDate
			}))
		);
}
