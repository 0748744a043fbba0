// Issue 14, section 1: an event in EUR with bids in EUR, USD and JPY. The rates are invented for the test
// (not any bank's): USD 0.9213 EUR; JPY 0.0061 EUR, amended after publication to 0.0062 EUR. Minor units
// from ISO 4217: EUR 2, USD 2, JPY 0. Amounts round half away from zero (common practice).
import * as devalue from 'devalue';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { toLocalInput } from '../../src/lib/time';
import type { Browserless } from '../support/http';
import { closeTestDb, testDb, type TestUser } from '../support/factories';
import {
	aSignedInUser,
	aSupplierOrganisationWithUser,
	anOpenEvent,
	fillSheet,
	signedIn,
	untilPast,
	uploadSheet,
	type TestEvent
} from '../support/events';
import { textOf } from '../support/html';
import { latestMailTo } from '../support/mail';
import { finished, post } from '../support/runs';
import { sheetRows } from '../support/workbook';

afterAll(closeTestDb);

type Party = { user: TestUser; client: Browserless; organisationId: string; name: string };
const json = async (response: Response) => (await response.json()) as Record<string, unknown>;
const ZONE = 'Europe/Berlin';

async function aBidder(): Promise<Party> {
	const { organisation, user } = await aSupplierOrganisationWithUser();
	return { user, client: await signedIn(user), organisationId: organisation.id, name: organisation.name };
}

const RATES = [
	'USD 0.9213 2026-12-01 invented for the test',
	'JPY 0.0061 2026-12-01 invented for the test'
].join('\n');
const AMENDED = [
	'USD 0.9213 2026-12-01 invented for the test',
	'JPY 0.0062 2026-12-02 invented for the test, amended'
].join('\n');

let buyer: { user: TestUser; client: Browserless };
let approver: { user: TestUser; client: Browserless };
let auditor: { user: TestUser; client: Browserless };
let eur: Party;
let usd: Party;
let jpy: Party;
let event: TestEvent;
let deadline: Date;

const trailOf = async () =>
	(await json(await buyer.client.get(`/api/events/${event.id}/trail`, 'application/json'))).entries as {
		action: string;
		detail: Record<string, unknown>;
	}[];

beforeAll(async () => {
	[buyer, approver, auditor, eur, usd, jpy] = await Promise.all([
		aSignedInUser('buyer'),
		aSignedInUser('approver'),
		aSignedInUser('auditor'),
		aBidder(),
		aBidder(),
		aBidder()
	]);
	deadline = new Date(Date.now() + 20_000);
	// Two items: IT-1 100 units, IT-2 200 units (the fixture's quantities).
	event = await anOpenEvent({
		createdBy: buyer.user.id,
		invite: [eur.organisationId, usd.organisationId, jpy.organisationId],
		deadline,
		items: 2,
		state: 'draft'
	});
}, 60_000);

describe('bids in several currencies', () => {
	it('sets the rate table on the draft, refusing a bad line without losing the table', async () => {
		const saved = await buyer.client.postForm(`/buyer/events/${event.id}?/rates`, { rates: RATES });
		expect(saved.status).toBe(200);
		const bad = await buyer.client.postForm(`/buyer/events/${event.id}?/rates`, {
			rates: 'USD 0,92 2026-12-01 x\nGBP 1.1 yesterday x'
		});
		expect(bad.status).toBeGreaterThanOrEqual(400);
		const page = textOf(await bad.text());
		expect(page).toContain('Line 1: "0,92" is not a rate');
		expect(page).toContain('Line 2: "yesterday" is not a date');
		const stored = await testDb()('event_rates').where({ event_id: event.id }).orderBy('currency');
		expect(stored.map((r: { currency: string; rate: string }) => [r.currency, Number(r.rate)])).toEqual([
			['JPY', 0.0061],
			['USD', 0.9213]
		]);
	});

	// The rates are in units of the event currency: switching the draft's currency under them would give
	// the same numbers another meaning, silently.
	it('refuses a change of the event currency while the draft has rates, on the currency field', async () => {
		const row = await testDb()('events').where({ id: event.id }).first();
		const response = await buyer.client.postForm(
			`/buyer/events/${event.id}?/save`,
			{
				reference: row.reference,
				title: row.title,
				description: row.description,
				currency: 'GBP',
				incoterm: row.incoterm,
				deliveryPlace: row.delivery_place,
				deadlineLocal: toLocalInput(deadline, row.time_zone),
				timeZone: row.time_zone,
				bidValidityDays: String(row.bid_validity_days)
			},
			'application/json'
		);
		const answer = (await response.json()) as { type: string; status: number; data: string };
		expect(answer).toMatchObject({ type: 'failure', status: 422 });
		const { form } = devalue.parse(answer.data) as { form: { errors: Record<string, string[]> } };
		expect(form.errors.currency?.[0]).toContain('The rate table gives JPY, USD in EUR.');
		expect((await testDb()('events').where({ id: event.id }).first()).currency).toBe('EUR');
	});

	it('locks the rates at publication: the draft form and the database refuse a change', async () => {
		const published = await buyer.client.postForm(`/buyer/events/${event.id}?/publish`, {});
		expect(published.status).toBe(200);
		expect((await testDb()('events').where({ id: event.id }).first()).state).toBe('open');
		const viaForm = await buyer.client.postForm(`/buyer/events/${event.id}?/rates`, { rates: AMENDED });
		expect(viaForm.status).toBe(409);
		await expect(
			testDb()('event_rates').where({ event_id: event.id, currency: 'JPY' }).update({ rate: 0.0062 })
		).rejects.toThrow(/change only by an amendment/);
		await expect(testDb()('event_rates').where({ event_id: event.id }).delete()).rejects.toThrow(
			/change only by an amendment/
		);
	});

	it('changes a rate by an amendment, recorded before and after in the trail and mailed to every supplier', async () => {
		const fields = {
			summary: 'The JPY rate of 2 December applies.',
			description: '',
			deliveryPlace: 'Test town',
			deadlineLocal: toLocalInput(deadline, ZONE)
		};
		const withdrawing = await buyer.client.postForm(`/buyer/events/${event.id}?/amend`, {
			...fields,
			rates: 'USD 0.9213 2026-12-01 invented for the test'
		});
		expect(withdrawing.status).toBe(422);
		expect(textOf(await withdrawing.text())).toContain('JPY cannot be withdrawn after publication');

		const sentAfter = new Date();
		const amended = await buyer.client.postForm(`/buyer/events/${event.id}?/amend`, {
			...fields,
			rates: AMENDED
		});
		expect(amended.status).toBe(200);
		const entry = (await trailOf()).find((e) => e.action === 'amendment 1')!;
		const rates = (entry.detail.changes as { rates: { before: unknown[]; after: unknown[] } }).rates;
		expect(rates.before).toContainEqual({
			currency: 'JPY',
			rate: 0.0061,
			source: 'invented for the test',
			rateDate: '2026-12-01'
		});
		expect(rates.after).toContainEqual({
			currency: 'JPY',
			rate: 0.0062,
			source: 'invented for the test, amended',
			rateDate: '2026-12-02'
		});
		for (const who of [eur, usd, jpy]) {
			const mail = await latestMailTo(who.user.email, { after: sentAfter, subject: /^Amendment 1/ });
			expect(mail.text).toContain(
				'Exchange rate 1 JPY = 0.0062 EUR (invented for the test, amended, 2026-12-02), was 0.0061 (invented for the test, 2026-12-01)'
			);
		}
	});

	it('takes bids in each allowed currency, and a refused file loses nothing stored', async () => {
		const sheetOf = async (who: Party) =>
			Buffer.from(await (await who.client.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer());
		// Columns F (unit price) and G (currency).
		const eurSheet = await fillSheet(await sheetOf(eur), { 'IT-1': [10], 'IT-2': [5] });
		expect((await uploadSheet(eur.client, event.id, eurSheet)).status).toBe(201);
		const usdSheet = await fillSheet(await sheetOf(usd), { 'IT-1': [10.4, 'USD'], 'IT-2': [5.6, 'usd'] });
		expect((await uploadSheet(usd.client, event.id, usdSheet)).status).toBe(201);

		const mixed = await fillSheet(await sheetOf(usd), { 'IT-1': [9, 'USD'], 'IT-2': [4, 'GBP'] });
		const refused = await uploadSheet(usd.client, event.id, mixed);
		expect(refused.status).toBe(422);
		expect((await json(refused)).problems).toEqual([
			{
				sheet: 'Prices',
				row: 3,
				column: 'G',
				message: '"GBP" is not a currency of this event: use EUR, JPY, USD (empty means EUR)'
			}
		]);
		const own = (await json(await usd.client.get(`/api/events/${event.id}/bids`, 'application/json')))
			.bids as { revision: number; currency: string; lines: { unitPrice: number }[] }[];
		expect(own.map((b) => [b.revision, b.currency, b.lines.map((l) => l.unitPrice)])).toEqual([
			[1, 'USD', [10.4, 5.6]]
		]);

		const screen = await jpy.client.postForm(
			`/supplier/events/${event.id}?/prices`,
			{
				entries: JSON.stringify([
					{ item: 'IT-1', cells: ['1650'] },
					{ item: 'IT-2', cells: ['780'] }
				]),
				currency: 'JPY'
			},
			'application/json'
		);
		expect((await json(screen)).type).toBe('success');
		await untilPast(deadline);
	}, 60_000);

	it('tabulates every bid converted at the fixed rate to the event currency’s minor unit', async () => {
		const tab = await json(await buyer.client.get(`/api/events/${event.id}/tabulation`, 'application/json'));
		const suppliers = tab.suppliers as {
			name: string;
			total: number;
			bidCurrency?: { code: string; rate: number; total: number };
		}[];
		const byName = new Map(suppliers.map((s) => [s.name, s]));
		// By hand, each line at the whole quantity (IT-1 100, IT-2 200):
		// EUR bid: 100 × 10 + 200 × 5 = 2,000.00 EUR.
		// USD bid: 10.40 × 0.9213 = 9.58152 EUR, × 100 = 958.152; 5.60 × 0.9213 = 5.15928, × 200 = 1,031.856;
		//   total 1,990.008 → 1,990.01 EUR; own 1,040.00 + 1,120.00 = 2,160.00 USD.
		// JPY bid: 1,650 × 0.0062 = 10.23 EUR, × 100 = 1,023.00; 780 × 0.0062 = 4.836, × 200 = 967.20;
		//   total 1,990.20 EUR; own 165,000 + 156,000 = 321,000 JPY (0 minor units).
		const eurTotal = (v: number) => Math.round(v * 100) / 100;
		expect(eurTotal(byName.get(eur.name)!.total)).toBe(2000);
		expect(eurTotal(byName.get(usd.name)!.total)).toBe(1990.01);
		expect(eurTotal(byName.get(jpy.name)!.total)).toBe(1990.2);
		expect(byName.get(usd.name)!.bidCurrency).toEqual({ code: 'USD', rate: 0.9213, total: 2160 });
		expect(byName.get(jpy.name)!.bidCurrency).toEqual({ code: 'JPY', rate: 0.0062, total: 321000 });
		expect(byName.get(eur.name)!.bidCurrency).toBeUndefined();
		const items = tab.items as { ref: string; prices: Record<string, number> }[];
		expect(items.find((i) => i.ref === 'IT-1')!.prices[usd.organisationId]).toBe(9.58152);
		expect(items.find((i) => i.ref === 'IT-2')!.prices[jpy.organisationId]).toBe(4.836);

		const page = textOf(await (await buyer.client.get(`/buyer/events/${event.id}/bids`)).text());
		expect(page).toContain('bid in USD at 0.9213 EUR; own prices 2,160.00 USD before freight and duty');
		expect(page).toContain('bid in JPY at 0.0062 EUR; own prices 321,000 JPY before freight and duty');

		// The workbook carries the same: each bid's currency, its rate and its own total beside the EUR one.
		const download = await buyer.client.get(`/api/events/${event.id}/tabulation?format=xlsx`);
		expect(download.status).toBe(200);
		const rows = new Map((await sheetRows(download, 'Suppliers')).map((r) => [String(r.values.Supplier), r]));
		const cell = (name: string, title: string) => rows.get(name)!.values[title];
		expect(cell(usd.name, 'Bid currency')).toBe('USD');
		expect(cell(usd.name, 'Rate (EUR per unit)')).toBe(0.9213);
		expect(cell(usd.name, 'Its own prices in its currency, before freight and duty')).toBe(2160);
		expect(cell(jpy.name, 'Bid currency')).toBe('JPY');
		expect(cell(jpy.name, 'Its own prices in its currency, before freight and duty')).toBe(321000);
		expect(cell(eur.name, 'Bid currency')).toBe('EUR');
		expect(Math.round((cell(usd.name, 'Total at its prices (EUR)') as number) * 100) / 100).toBe(1990.01);
	});

	it('runs on the converted prices, and gives the total and each supplier’s notice in both currencies', async () => {
		const plans = (await json(await buyer.client.get(`/api/events/${event.id}/plans`, 'application/json')))
			.plans as { id: string; lowestCost: boolean }[];
		const started = await post(buyer.client, `/api/plans/${plans.find((p) => p.lowestCost)!.id}/runs`, {});
		const runId = (await json(started)).runId as string;
		const run = await finished(buyer.client, runId, 120_000);
		const result = run.result as {
			totalCost: number;
			awards: { supplier: string; item: string; quantity: number }[];
		};
		// IT-1 lowest: USD bid 9.58152 EUR (EUR bid 10, JPY bid 10.23); IT-2 lowest: JPY bid 4.836 EUR
		// (EUR bid 5, USD bid 5.15928). Total 958.152 + 967.20 = 1,925.352 → 1,925.35 EUR.
		expect(result.totalCost).toBeCloseTo(1925.352, 6);
		expect(result.awards.filter((a) => a.quantity > 0).map((a) => `${a.item}:${a.supplier}`)).toEqual([
			`IT-1:${usd.name}`,
			`IT-2:${jpy.name}`
		]);
		const withProblem = await json(
			await buyer.client.get(`/api/runs/${runId}?problem=1`, 'application/json')
		);
		const suppliers = (withProblem.problem as { suppliers: { ref: string; bidCurrency?: unknown }[] })
			.suppliers;
		expect(suppliers.find((s) => s.ref === usd.name)!.bidCurrency).toEqual({ code: 'USD', rate: 0.9213 });
		expect(suppliers.find((s) => s.ref === jpy.name)!.bidCurrency).toEqual({ code: 'JPY', rate: 0.0062 });

		const runPage = textOf(
			await (await buyer.client.get(`/buyer/events/${event.id}/award/runs/${runId}`)).text()
		);
		// USD: 100 × 10.40 = 1,040.00 USD; JPY: 200 × 780 = 156,000 JPY.
		expect(runPage).toContain('958.15 1,040.00 USD at 0.9213 EUR');
		expect(runPage).toContain('967.20 156,000 JPY at 0.0062 EUR');
		// The approver decides on the same figures, and the auditor reads them (services/run-evaluation.ts).
		for (const [who, path] of [
			[approver, `/approver/runs/${runId}`],
			[auditor, `/audit/runs/${runId}`]
		] as const) {
			const page = textOf(await (await who.client.get(path)).text());
			expect(page, path).toContain('958.15 1,040.00 USD at 0.9213 EUR');
			expect(page, path).toContain('967.20 156,000 JPY at 0.0062 EUR');
		}

		await post(buyer.client, `/api/runs/${runId}/submit`, {
			justification: 'The lowest cost at the rates fixed before bidding.'
		});
		const approvedAfter = new Date();
		const approved = await post(approver.client, `/api/runs/${runId}/decision`, {
			decision: 'approve',
			comment: 'Agreed.'
		});
		expect(approved.status).toBe(200);
		const usdNotice = await latestMailTo(usd.user.email, {
			after: approvedAfter,
			subject: /^Award notice/,
			timeoutMs: 20_000
		});
		expect(usdNotice.text).toContain(
			'IT-1: 100 at 9.58152 EUR = 958.15 EUR (your price 10.40 USD = 1,040.00 USD)'
		);
		expect(usdNotice.text).toContain(
			'In your bid currency: 1,040.00 USD. Bids were compared in EUR at the rate fixed before bidding: 1 USD = 0.9213 EUR (invented for the test, 2026-12-01).'
		);
		const jpyNotice = await latestMailTo(jpy.user.email, {
			after: approvedAfter,
			subject: /^Award notice/,
			timeoutMs: 20_000
		});
		expect(jpyNotice.text).toContain(
			'IT-2: 200 at 4.836 EUR = 967.20 EUR (your price 780 JPY = 156,000 JPY)'
		);
		expect(jpyNotice.text).toContain('Total: 967.20 EUR');
		const mine = await json(await usd.client.get(`/api/events/${event.id}/my-result`, 'application/json'));
		expect(mine.ownCurrency).toMatchObject({ code: 'USD', rate: 0.9213, total: 1040, eventTotal: 958.15 });
		expect(jpyNotice.text).toContain(
			'In your bid currency: 156,000 JPY. Bids were compared in EUR at the rate fixed before bidding: 1 JPY = 0.0062 EUR (invented for the test, amended, 2026-12-02).'
		);
	}, 180_000);
});
