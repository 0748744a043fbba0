// The Bids tab's tabulation for the buying organisation's staff: sealed (who has submitted, never a price)
// until the deadline, then every item against every current bid (tabulation.ts), filtered, sorted and
// paged on the server, and as a workbook.
import type { SessionUser } from '../auth/session-user';
import { BoundedCache } from '../bounded-cache';
import { now } from '../clock';
import { listSubmissions, visibleBids, type Submission } from '../db/bids';
import { listItems, type EventRow } from '../db/events';
import { db } from '../db/knex';
import { describeFlag, lowPriceFlags } from '../low-price-flags';
import {
	tabulate,
	viewTabulation,
	type Tabulated,
	type TabulationQuery,
	type TabulationView
} from '../tabulation';
import { effectiveState, evaluationEvent } from './events';
import { listRates } from '../db/currencies';
import { bidsInEventCurrency, ownCurrencyTotals } from './currencies';
import { latestOpenedRound } from './rounds';
import { formatChange, formatMoney, formatQuantity, formatShare, formatUnitPrice } from '$lib/format';
import { TABULATION_PAGE_ITEMS } from '$lib/paging';

/**
 * Tabulations of opened events, by event and every supplier's latest revision (after the deadline an
 * event's items and bids no longer change; were a bid added all the same, a server clock moved back and
 * forth, its supplier's latest revision number would change the key). Weighed in cells (items x bids):
 * 1,000,000 holds four events of 5,000 items and 50 bids, about 20 bytes a cell.
 */
const opened = new BoundedCache<Tabulated>(1_000_000);

export type StaffTabulation =
	| { sealed: true; event: EventRow; submissions: Submission[] }
	| { sealed: false; event: EventRow; submissions: Submission[]; tab: Tabulated };

/**
 * The tabulation of the latest opened round's bids; with `round`, of that earlier round's (each
 * supplier's latest revision up to it: what a run on that round was built on).
 */
export async function staffTabulation(
	actor: SessionUser,
	id: string,
	options: { round?: number } = {}
): Promise<StaffTabulation> {
	const event = await evaluationEvent(actor, id);
	const submissions = await listSubmissions(db(), id);
	if (['draft', 'open'].includes(effectiveState(event))) return { sealed: true, event, submissions };
	// A later round's opening changes what the buyer sees without a new revision: the round is in the key.
	const latest = await latestOpenedRound(db(), id);
	const round = options.round === undefined ? latest : Math.min(options.round, latest);
	const key = `${id}|${round}|${submissions.map((s) => `${s.supplier_organisation_id}:${s.latest_number}`).join(',')}`;
	const known = opened.get(key);
	if (known) return { sealed: false, event, submissions, tab: known };
	const [items, bids, rates] = await Promise.all([
		listItems(db(), id),
		visibleBids(db(), id, actor.organisationId, now(), round < latest ? { round } : {}),
		listRates(db(), id)
	]);
	// Compared in the event currency at the fixed rates; each supplier keeps its own currency beside it.
	const tab = tabulate(items, bidsInEventCurrency(bids, event.currency, rates));
	const own = ownCurrencyTotals(bids, items, event.currency, rates);
	for (const supplier of tab.suppliers) supplier.bidCurrency = own.get(supplier.id);
	return {
		sealed: false,
		event,
		submissions,
		tab: opened.set(key, tab, items.length * (bids.length + 1))
	};
}

/** What the page and the export read from a URL's query: anything unknown is left out, never an error. */
export function tabulationQuery(params: URLSearchParams, pageSize = TABULATION_PAGE_ITEMS): TabulationQuery {
	const text = (name: string) => {
		const value = params.get(name);
		return value === null || value === '' ? undefined : value.slice(0, 200);
	};
	const lot = params.get('lot');
	const page = Number.parseInt(params.get('page') ?? '1', 10);
	return {
		// "-" asks for the items in no lot; absent or empty, every lot.
		lot: lot === '-' ? '' : lot || undefined,
		bidder: text('bidder'),
		lowest: text('lowest'),
		text: text('q'),
		sort: text('sort'),
		descending: params.get('dir') === 'desc',
		page: Number.isInteger(page) ? page : 1,
		pageSize
	};
}

/** The difference each cell shows under its price: to the item's lowest, to its baseline, or none. */
export type Compared = 'lowest' | 'baseline' | 'none';

export const comparedFrom = (params: URLSearchParams): Compared => {
	const asked = params.get('show');
	return asked === 'baseline' || asked === 'none' ? asked : 'lowest';
};

/**
 * One page as the page shows it: text made here, so the page's data is what it shows and not the bids
 * behind it (the page is rendered on the server for every request, and its size is most of that time).
 */
export function tabulationPage(tab: Tabulated, view: TabulationView, currency: string, compared: Compared) {
	const width = tab.suppliers.length;
	const columns = tab.suppliers.flatMap((s, c) => (s.withdrawn ? [] : [c]));
	const money = (v: number) => formatMoney(v, currency);
	const unitPrice = (v: number) => formatUnitPrice(v, currency);
	// Abnormally low lines (the screen of low-price-flags.ts), by cell.
	const low = new Map(
		lowPriceFlags(tab).flatMap((f) =>
			f.row === null ? [] : [[f.row * width + f.column, describeFlag(f, currency)]]
		)
	);
	return {
		columns: columns.map((c) => ({ id: tab.suppliers[c]!.id, name: tab.suppliers[c]!.name })),
		rows: view.rows.map((r) => {
			const item = tab.items[r]!;
			const baseline = item.baselineUnitPrice;
			return {
				ref: item.ref,
				description: item.description,
				lot: item.lot ?? '—',
				quantity: formatQuantity(item.quantity),
				unit: item.unit,
				multiple: item.orderMultiple === null ? null : formatQuantity(item.orderMultiple),
				adder: item.adder ? unitPrice(item.adder) : null,
				baseline: baseline === null ? '—' : unitPrice(baseline),
				baselineTotal: baseline === null ? '—' : money(baseline * item.quantity),
				lowest: item.lowest === null ? 'No bid' : unitPrice(item.lowest),
				lowestBy: item.lowestBy.map((c) => tab.suppliers[c]!.name),
				cells: columns.map((c) => {
					const price = tab.prices[r * width + c]!;
					if (Number.isNaN(price)) return null;
					const notes = tab.notes[r * width + c];
					const terms: string[] = [];
					if (notes) {
						if (notes.breaks.length) terms.push(`base ${unitPrice(notes.basePrice)}`);
						for (const b of [...notes.breaks].sort((x, y) => x.fromQuantity - y.fromQuantity))
							terms.push(`from ${formatQuantity(b.fromQuantity)}: ${unitPrice(b.unitPrice)}`);
						if (notes.maxQuantity !== null) terms.push(`at most ${formatQuantity(notes.maxQuantity)}`);
						if (notes.packSize !== null) terms.push(`packs of ${formatQuantity(notes.packSize)}`);
					}
					const against = compared === 'lowest' ? item.lowest : compared === 'baseline' ? baseline : null;
					return {
						price: unitPrice(price),
						lowest: item.lowestBy.includes(c),
						low: low.get(r * width + c) ?? null,
						change:
							against && !(compared === 'lowest' && item.lowestBy.includes(c))
								? formatChange((price - against) / against)
								: null,
						terms
					};
				})
			};
		})
	};
}

/** The supplier totals and the event's figures, as text. */
export function tabulationTotals(tab: Tabulated, currency: string) {
	const money = (v: number) => formatMoney(v, currency);
	const saving = (baseline: number, total: number) =>
		baseline > 0 ? `${money(baseline - total)} (${formatShare((baseline - total) / baseline)})` : '—';
	const s = tab.summary;
	return {
		summary: {
			items: s.items,
			itemsWithBids: s.itemsWithBids,
			bids: tab.suppliers.filter((b) => !b.withdrawn).length,
			baselineTotal: s.baselineTotal === null ? null : money(s.baselineTotal),
			cherryPickTotal: money(s.cherryPickTotal),
			cherryPickSaving:
				s.cherryPickBaseline > 0 ? saving(s.cherryPickBaseline, s.cherryPickOfBaselined) : null
		},
		suppliers: tab.suppliers.map((b) => ({
			id: b.id,
			name: b.name,
			withdrawn: b.withdrawn,
			revision: b.revision,
			itemsBid: `${formatQuantity(b.itemsBid)} of ${formatQuantity(s.items)}`,
			itemShare: formatShare(b.itemShare),
			baselineShare: b.baselineShare === null ? '—' : formatShare(b.baselineShare),
			total: b.itemsBid ? money(b.total) : '—',
			saving: saving(b.baselineOfPriced, b.totalOfBaselined),
			lowestItems: formatQuantity(b.lowestItems),
			lowestValue: b.lowestItems ? money(b.lowestValue) : '—',
			capacity: b.capacity === null ? 'No limit stated' : formatQuantity(b.capacity),
			bidCurrency: b.bidCurrency
				? `${b.bidCurrency.code} at ${b.bidCurrency.rate} ${currency}; own prices ${formatMoney(b.bidCurrency.total, b.bidCurrency.code)} ${b.bidCurrency.code} before freight and duty`
				: currency,
			bundles: b.bundles.map((bundle) => ({
				ref: bundle.ref,
				price: money(bundle.price),
				items: bundle.items.map((i) => `${i.item} × ${formatQuantity(i.quantity)}`).join(', ')
			}))
		}))
	};
}

/** Lots for the filter: each lot's ref once, in the event's order, and whether some items have none. */
export function tabulationLots(tab: Tabulated): { lots: string[]; unlotted: boolean } {
	const lots = [...new Set(tab.items.flatMap((i) => (i.lot === null ? [] : [i.lot])))];
	return { lots, unlotted: tab.items.some((i) => i.lot === null) };
}

export { viewTabulation };

/** Shaped pages kept per tabulation (a cached tabulation is the same frozen object on every view): the
 * same filters and page are shaped once, up to this many different ones per tabulation. */
const SHAPED_PER_TABULATION = 32;
const shaped = new WeakMap<Tabulated, Map<string, ReturnType<typeof shapeView>>>();

function shapeView(tab: Tabulated, params: URLSearchParams, currency: string) {
	const query = tabulationQuery(params);
	const view = viewTabulation(tab, query);
	const compared = comparedFrom(params);
	return {
		query: {
			lot: params.get('lot') ?? '',
			bidder: query.bidder ?? '',
			lowest: query.lowest ?? '',
			q: query.text ?? '',
			sort: query.sort ?? 'position',
			dir: query.descending ? ('desc' as const) : ('asc' as const),
			show: compared
		},
		...tabulationLots(tab),
		...tabulationPage(tab, view, currency, compared),
		...tabulationTotals(tab, currency),
		matched: view.matched,
		page: view.page,
		pages: view.pages
	};
}

/** The Bids tab's page of the tabulation for a URL's query, shaped as the page shows it. */
export function tabulationView(tab: Tabulated, params: URLSearchParams, currency: string) {
	const key = `${currency}|${['lot', 'bidder', 'lowest', 'q', 'sort', 'dir', 'show', 'page'].map((n) => params.get(n) ?? '').join('|')}`;
	if (!Object.isFrozen(tab)) return shapeView(tab, params, currency);
	let views = shaped.get(tab);
	if (!views) shaped.set(tab, (views = new Map()));
	const known = views.get(key);
	if (known) return known;
	const made = shapeView(tab, params, currency);
	if (views.size >= SHAPED_PER_TABULATION) views.delete(views.keys().next().value!);
	views.set(key, made);
	return made;
}
