// The exchange rates of an event: set on the draft, locked at publication (an amendment changes them,
// services/events.ts amend), read by the bid sheet, the runs and the pages.
import { priceAtQuantity } from '$lib/award/core/prices';
import { convertPrice, parseRateTable, rateFor, toMinorUnit, type EventRate } from '$lib/currencies';
import type { VisibleBid } from '../db/bids';
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

/**
 * The bids with every price (unit prices, breaks, bundles) in the event currency at the fixed rates, at six
 * decimals as the runs take them; `currency` stays the bid's own. A bid in a currency without a rate is
 * left as it is: the runs refuse it by name (award-runs.ts).
 */
export function bidsInEventCurrency(
	bids: readonly VisibleBid[],
	eventCurrency: string,
	rates: readonly EventRate[]
): VisibleBid[] {
	return bids.map((bid) => {
		const rate = rateFor(bid.currency, eventCurrency, rates);
		if (rate === undefined || rate === 1) return bid;
		const convert = (price: string) => String(convertPrice(Number(price), rate));
		return {
			...bid,
			lines: bid.lines.map((l) => ({
				...l,
				unitPrice: convert(l.unitPrice),
				priceBreaks: l.priceBreaks.map((b) => ({ ...b, unitPrice: convert(b.unitPrice) }))
			})),
			bundles: bid.bundles.map((b) => ({ ...b, price: convert(b.price) }))
		};
	});
}

/** A bid's own figures: its currency, the rate, and its priced items at its own prices (before adders). */
export interface OwnCurrency {
	code: string;
	rate: number;
	/** Σ own unit price at the item's whole quantity × quantity, in `code`, before freight and duty. */
	total: number;
}

export function ownCurrencyTotals(
	bids: readonly VisibleBid[],
	items: readonly { ref: string; quantity: string }[],
	eventCurrency: string,
	rates: readonly EventRate[]
): Map<string, OwnCurrency> {
	const quantity = new Map(items.map((i) => [i.ref, Number(i.quantity)]));
	const out = new Map<string, OwnCurrency>();
	for (const bid of bids) {
		const rate = rateFor(bid.currency, eventCurrency, rates);
		if (rate === undefined || bid.currency === eventCurrency) continue;
		let total = 0;
		for (const l of bid.lines) {
			const q = quantity.get(l.item) ?? 0;
			const reached = Math.min(q, l.maxQuantity === null ? Infinity : Number(l.maxQuantity));
			const price = priceAtQuantity(
				{
					unitPrice: Number(l.unitPrice),
					priceBreaks: l.priceBreaks.map((b) => ({
						fromQuantity: Number(b.fromQuantity),
						unitPrice: Number(b.unitPrice)
					}))
				},
				reached
			);
			total += price * q;
		}
		out.set(bid.supplierOrganisationId, {
			code: bid.currency,
			rate,
			total: toMinorUnit(total, bid.currency)
		});
	}
	return out;
}
