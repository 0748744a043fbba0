// The exchange rates of an event: set on the draft, locked at publication (an amendment changes them,
// services/events.ts amend), read by the bid sheet, the runs and the pages.
import { priceAtQuantity } from '$lib/award/core/prices';
import type { AwardProblem } from '$lib/award/core/problem';
import { priceBeforeCriteria } from '$lib/evaluation/apply-criteria';
import {
	convertPrice,
	parseRateTable,
	rateFor,
	roundHalfAway,
	toMinorUnit,
	type EventRate
} from '$lib/currencies';
import { visibleBids, type VisibleBid } from '../db/bids';
import { listItems } from '../db/events';
import type { SessionUser } from '../auth/session-user';
import { listRates, replaceRates } from '../db/currencies';
import { db } from '../db/knex';
import { appendTrail } from '../trail';
import { RuleViolation } from './errors';
import { findRun } from './award-runs';
import { now } from '../clock';
import { formatMoney } from '$lib/format';
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

/** A supplier's award in its own currency beside the event currency's (notice, run page, report). */
export interface OwnAward {
	code: string;
	rate: number;
	source: string;
	rateDate: string;
	/** Per awarded line: its unit price and cost in `code` (the cost at the own currency's minor unit). */
	lines: { item: string; unitPrice: number; cost: number }[];
	/** Σ cost in `code`, at its minor unit; `eventTotal` the same award in the event currency, at its minor unit. */
	total: number;
	eventTotal: number;
}

/**
 * The awarded lines of the run in each supplier's own currency, for suppliers that bid in another currency
 * than the event's: each line at the supplier's own price at the awarded quantity (its price breaks apply
 * as the engine applied the converted ones); a line its own prices do not cover (won in a bundle) is the
 * run's landed cost less the item's adders, converted back at the run's rate. Code and rate come from the
 * run's problem (bound by its hash), the rate's source and date from the event's table.
 */
export async function ownCurrencyAwards(
	event: { id: string; organisation_id: string; currency: string },
	run: {
		/** The round whose bids the run used: its own prices are read from that round's bid. */
		round?: number;
		problem: AwardProblem;
		result: {
			awards: {
				supplier: string;
				item: string;
				quantity: number;
				unitPrice: number;
				cost: number;
				bundle?: string;
			}[];
		} | null;
	},
	at: Date,
	/** One supplier only (its own result page): only its bid is read. */
	only?: { organisationId: string; name: string }
): Promise<Map<string, OwnAward>> {
	const out = new Map<string, OwnAward>();
	const foreign = run.problem.suppliers.filter((s) => s.bidCurrency && (!only || s.ref === only.name));
	if (!foreign.length || !run.result) return out;
	const [bids, items, rates] = await Promise.all([
		visibleBids(db(), event.id, event.organisation_id, at, {
			...(only ? { supplierOrganisationId: only.organisationId } : {}),
			// The bids the run was built on, not a revision of a later round.
			...(run.round !== undefined ? { round: run.round } : {})
		}),
		listItems(db(), event.id),
		listRates(db(), event.id)
	]);
	const adder = new Map(
		items.map((i) => [i.ref, Number(i.freight_per_unit ?? 0) + Number(i.duty_per_unit ?? 0)])
	);
	for (const supplier of foreign) {
		const { code, rate } = supplier.bidCurrency!;
		// Its own prices only while they are in the run's currency for it; else converted back at the rate.
		const bid = bids.find((b) => b.supplierName === supplier.ref && b.currency === code);
		const own = new Map(bid?.lines.map((l) => [l.item, l]) ?? []);
		const awarded = run.result.awards.filter((a) => a.supplier === supplier.ref && a.quantity > 0);
		const lines = awarded.map((a) => {
			// A line won in a bundle has the bundle's price, not the item's own: converted back at the rate.
			const line = a.bundle ? undefined : own.get(a.item);
			const unitPrice = line
				? priceAtQuantity(
						{
							unitPrice: Number(line.unitPrice),
							priceBreaks: line.priceBreaks.map((b) => ({
								fromQuantity: Number(b.fromQuantity),
								unitPrice: Number(b.unitPrice)
							}))
						},
						a.quantity
					)
				: roundHalfAway(
						(priceBeforeCriteria(run.problem, a) / a.quantity - (adder.get(a.item) ?? 0)) / rate,
						6
					);
			return { item: a.item, unitPrice, cost: toMinorUnit(unitPrice * a.quantity, code) };
		});
		const table = rates.find((r) => r.currency === code);
		out.set(supplier.ref, {
			code,
			rate,
			source: table?.source ?? '',
			rateDate: table?.rateDate ?? '',
			lines,
			total: toMinorUnit(
				awarded.reduce((sum, a, k) => sum + lines[k]!.unitPrice * a.quantity, 0),
				code
			),
			// At its price in the event currency: a run on evaluated cost stores the criteria in each cost.
			eventTotal: toMinorUnit(
				awarded.reduce((sum, a) => sum + priceBeforeCriteria(run.problem, a), 0),
				event.currency
			)
		});
	}
	return out;
}

/** The run page's own-currency totals, by supplier name: staff who may see the run (findRun's checks). */
export async function runOwnCurrencies(
	user: SessionUser,
	runId: string,
	eventId: string
): Promise<Record<string, { code: string; rate: number; total: string }>> {
	const { run, event } = await findRun(user, runId, eventId);
	if (run.status !== 'done') return {};
	const awards = await ownCurrencyAwards(event, run, now());
	return Object.fromEntries(
		[...awards].map(([name, a]) => [
			name,
			{ code: a.code, rate: a.rate, total: formatMoney(a.total, a.code) }
		])
	);
}
