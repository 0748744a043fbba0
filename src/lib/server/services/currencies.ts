// The exchange rates of an event: set on the draft, locked at publication (an amendment changes them,
// services/events.ts amend), read by the bid sheet, the runs and the pages.
import { parseRateTable, type EventRate } from '$lib/currencies';
import type { SessionUser } from '../auth/session-user';
import { listRates, replaceRates } from '../db/currencies';
import { db } from '../db/knex';
import { appendTrail } from '../trail';
import { RuleViolation } from './errors';
import { eventFor, lockedDraft } from './events';

/** The rates of an event its viewer may see (buyers, evaluators and invited suppliers alike). */
export async function eventRates(user: SessionUser, id: string): Promise<EventRate[]> {
	await eventFor(user, id);
	return listRates(db(), id);
}

/** The draft's rate table, as the buyer typed it (one rate per line); a table with a bad line changes nothing. */
export async function setDraftRates(actor: SessionUser, id: string, text: string): Promise<EventRate[]> {
	return db().transaction(async (trx) => {
		const event = await lockedDraft(trx, actor, id);
		const parsed = parseRateTable(text, event.currency);
		if (!parsed.ok) throw new RuleViolation(parsed.problems.join(' '), 'rates', 422);
		await replaceRates(trx, id, parsed.rates);
		await appendTrail(trx, {
			eventId: id,
			actor,
			action: 'exchange rates set',
			detail: { eventCurrency: event.currency, rates: parsed.rates }
		});
		return parsed.rates;
	});
}
