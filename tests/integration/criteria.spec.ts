// Non-price criteria as money (src/lib/evaluation/criteria.ts): set on the draft and locked at
// publication, answered in the bid sheet (per-cell problems, nothing stored lost on a refused file),
// scored by an evaluator with a reason (trail), and minimised by the award as price + money. One run.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import ExcelJS from 'exceljs';
import { formatMoney, formatUnitPrice } from '../../src/lib/format';
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
import { closeTestDb, testDb } from '../support/factories';
import { textOf } from '../support/html';
import type { Browserless } from '../support/http';
import { latestMailTo } from '../support/mail';
import { finished, post } from '../support/runs';
import { sheetRows } from '../support/workbook';

afterAll(closeTestDb);

let buyer: { client: Browserless; user: { id: number } };
let a: Awaited<ReturnType<typeof aSupplierOrganisationWithUser>>;
let b: Awaited<ReturnType<typeof aSupplierOrganisationWithUser>>;
let c: Awaited<ReturnType<typeof aSupplierOrganisationWithUser>>;
let event: TestEvent;
let approver: { client: Browserless };
let runId = '';
const deadline = new Date(Date.now() + 15_000);

/** A form action's POST with repeated fields, as the page's form sends it. */
const postAction = (client: Browserless, path: string, fields: [string, string][]) =>
	client.request(path, { method: 'POST', body: new URLSearchParams(fields), accept: 'application/json' });

const row = (values: Record<string, string>): [string, string][] => Object.entries(values);
/** The opening tag of the control with this aria-label or id in a page's HTML. */
const controlTag = (html: string, attribute: string) =>
	html.match(new RegExp(`<(?:input|select|textarea)[^>]*${attribute}[^>]*>`))?.[0] ?? '';
const criteriaPage = async () => {
	const response = await buyer.client.get(`/buyer/events/${event.id}/criteria`);
	expect(response.status).toBe(200);
	return textOf(await response.text());
};

beforeAll(async () => {
	buyer = await aSignedInUser('buyer');
	approver = await aSignedInUser('approver');
	[a, b, c] = [
		await aSupplierOrganisationWithUser(),
		await aSupplierOrganisationWithUser(),
		await aSupplierOrganisationWithUser()
	];
	// IT-1 100 units, IT-2 200 units (the fixture's quantities).
	event = await anOpenEvent({
		createdBy: buyer.user.id,
		invite: [a, b, c].map((s) => s.organisation.id),
		items: 2,
		state: 'draft',
		deadline
	});
});

describe('non-price criteria as money', () => {
	it('sets the criteria on the draft and locks them at publication', async () => {
		// A refused save names the cell: the form (without JavaScript) marks it and shows the message beside it.
		const wrong = await buyer.client.request(`/buyer/events/${event.id}/criteria?/save`, {
			method: 'POST',
			body: new URLSearchParams([
				...row({ ref: 'LT', name: 'Lead time', unit: 'days', answeredBy: 'supplier' }),
				...row({ basis: 'percent_of_price', rate: '150', threshold: '5', direction: 'above' })
			])
		});
		const wrongHtml = await wrong.text();
		expect(controlTag(wrongHtml, 'aria-label="Per point 1"')).toContain('aria-invalid="true"');
		expect(controlTag(wrongHtml, 'aria-label="Threshold 1"')).not.toContain('aria-invalid');
		expect(wrongHtml).toMatch(
			/id="criterion-0-rate-error"[^>]*>[\s\S]{0,400}a percentage per point must be at most 100/
		);
		const saved = await postAction(buyer.client, `/buyer/events/${event.id}/criteria?/save`, [
			...row({ ref: 'LT', name: 'Lead time', unit: 'days', answeredBy: 'supplier' }),
			...row({ basis: 'percent_of_price', rate: '0.2', threshold: '5', direction: 'above' }),
			...row({ ref: 'SQ', name: 'Service quality', unit: 'points', answeredBy: 'evaluator' }),
			...row({ basis: 'per_supplier', rate: '1', threshold: '80', direction: 'below' })
		]);
		expect(await saved.text()).toContain('Saved 2 criteria');
		expect(await criteriaPage()).toContain('Each point above 5 days adds 0.2% of the unit price');
		await testDb()('events').where({ id: event.id }).update({ state: 'open', published_at: new Date() });
		const refused = await postAction(buyer.client, `/buyer/events/${event.id}/criteria?/save`, []);
		expect(await refused.text()).toContain('The event is published');
		await expect(
			testDb()('evaluation_criteria').where({ event_id: event.id, ref: 'LT' }).update({ rate: 0 })
		).rejects.toThrow(/locked once the event is published/);
	});

	it('takes the answers in the bid sheet, cell by cell, and keeps the stored bid when a file is refused', async () => {
		const supplierA = await signedIn(a.user);
		const csv = await (await supplierA.get(`/api/events/${event.id}/bid-sheet?format=csv`)).text();
		const [header, , , criteriaHeader] = csv.trim().split('\r\n');
		expect(criteriaHeader).toBe('Criterion ref,Criterion,Unit,Your answer');
		const csvOf = (lines: string[]) => Buffer.from([header, ...lines].join('\r\n'));
		// A: 10 and 20, lead time 15 days.
		const good = csvOf(['IT-1,,,C62,100,10', 'IT-2,,,C62,200,20', criteriaHeader!, 'LT,Lead time,days,15']);
		expect((await uploadSheet(supplierA, event.id, good, 'bid.csv')).status).toBe(201);
		// A second file with a decimal comma in the answer: refused with the cell named; the first bid stays.
		const bad = csvOf(['IT-1,,,C62,100,9', 'IT-2,,,C62,200,19', criteriaHeader!, 'LT,Lead time,days,"12,5"']);
		const refused = await uploadSheet(supplierA, event.id, bad, 'bid.csv');
		expect(refused.status).toBe(422);
		expect(((await refused.json()) as { problems: unknown[] }).problems).toEqual([
			{
				sheet: 'CSV',
				row: 5,
				column: 'D',
				message: '"12,5" is not a number: write the decimal mark as a point (12.5)'
			}
		]);
		// B: 10.10 and 20.50, lead time 5 days; C: 12 and 24, lead time 3 days (workbooks).
		for (const [supplier, prices, days] of [
			[b, [10.1, 20.5], 5],
			[c, [12, 24], 3]
		] as const) {
			const client = await signedIn(supplier.user);
			const sheet = Buffer.from(await (await client.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer());
			const filled = await fillSheet(
				sheet,
				{ 'IT-1': [prices[0]], 'IT-2': [prices[1]] },
				(workbook: ExcelJS.Workbook) => (workbook.getWorksheet('Criteria')!.getCell('D2').value = days)
			);
			expect((await uploadSheet(client, event.id, filled)).status).toBe(201);
		}
	});

	it('waits for every score, then awards on the evaluated cost exactly as computed by hand', async () => {
		await untilPast(deadline);
		// The stored answers: A's refused file changed nothing.
		const page = await criteriaPage();
		expect(page).toMatch(new RegExp(`${a.organisation.name} 15 not yet 2% `));
		const plans = (await (
			await buyer.client.get(`/api/events/${event.id}/plans`, 'application/json')
		).json()) as {
			plans: { id: string; lowestCost: boolean }[];
		};
		const plan = plans.plans.find((p) => p.lowestCost)!.id;
		const early = await post(buyer.client, `/api/plans/${plan}/runs`, {});
		expect(early.status).toBe(422);
		expect(await early.text()).toContain('Score or answer every criterion before a run');
		// A score without its reason is refused on the reason's field.
		const unreasoned = await buyer.client.request(`/buyer/events/${event.id}/criteria?/score`, {
			method: 'POST',
			body: new URLSearchParams([
				...row({ criterionRef: 'SQ', supplierOrganisationId: a.organisation.id, value: '70', comment: '' })
			])
		});
		const unreasonedHtml = await unreasoned.text();
		expect(controlTag(unreasonedHtml, 'id="score-comment"')).toContain('aria-invalid="true"');
		expect(controlTag(unreasonedHtml, 'id="score-value"')).not.toContain('aria-invalid');
		// Service quality, 1 once per point below 80: A 70 → 10 points → 10 once; B 80 and C 94.7 → 0.
		for (const [supplier, value] of [
			[a, '70'],
			[b, '80'],
			[c, '94.7']
		] as const) {
			const scored = await postAction(buyer.client, `/buyer/events/${event.id}/criteria?/score`, [
				...row({ criterionRef: 'SQ', supplierOrganisationId: supplier.organisation.id, value }),
				...row({ comment: `Site visit: ${value} of 100` })
			]);
			expect(await scored.text()).toContain('Score recorded in the decision trail');
		}
		const trail = await testDb()('trail_entries').where({ event_id: event.id, action: 'criterion scored' });
		expect(trail).toHaveLength(3);

		// The tabulation's totals: A 5,000 at price, 100 × 10.20 + 200 × 20.40 + 10 = 5,110 evaluated;
		// B 1,010 + 4,100 = 5,110 both; C 1,200 + 4,800 = 6,000 both.
		const bids = textOf(await (await buyer.client.get(`/buyer/events/${event.id}/bids`)).text());
		expect(bids).toContain(`${a.organisation.name} ${formatMoney(5000, 'EUR')} ${formatMoney(5110, 'EUR')}`);
		expect(bids).toContain(`${c.organisation.name} ${formatMoney(6000, 'EUR')} ${formatMoney(6000, 'EUR')}`);
		// The tabulation's workbook: the same totals at price and evaluated.
		const tabulation = await buyer.client.get(`/api/events/${event.id}/tabulation?format=xlsx`);
		const evaluatedColumn = 'Evaluated cost, price and criteria (EUR)';
		const cents = (v: unknown) => Math.round(Number(v) * 100) / 100;
		expect(
			(await sheetRows(tabulation, 'Suppliers'))
				.map((r) => [
					r.values.Supplier,
					cents(r.values['Total at its prices (EUR)']),
					cents(r.values[evaluatedColumn])
				])
				.sort((x, y) => String(x[0]).localeCompare(String(y[0])))
		).toEqual(
			[
				[a.organisation.name, 5000, 5110],
				[b.organisation.name, 5110, 5110],
				[c.organisation.name, 6000, 6000]
			].sort((x, y) => String(x[0]).localeCompare(String(y[0])))
		);

		// By hand. Evaluated unit costs: A 10 × 1.02 = 10.20 and 20 × 1.02 = 20.40 (lead time 15: (15 - 5) ×
		// 0.2 % = 2 %), plus 10 once if A wins anything; B 10.10 and 20.50; C 12 and 24.
		// Without criteria A wins both items: 100 × 10 + 200 × 20 = 5,000 (lowest price on each).
		// With them: IT-1 from B and IT-2 from A: 100 × 10.10 + 200 × 20.40 + 10 = 1,010 + 4,080 + 10 = 5,100;
		// A both: 1,020 + 4,080 + 10 = 5,110; B both: 1,010 + 4,100 = 5,110; A on IT-1, B on IT-2: 5,130.
		const started = (await (await post(buyer.client, `/api/plans/${plan}/runs`, {})).json()) as {
			runId: string;
		};
		runId = started.runId;
		const run = (await finished(buyer.client, started.runId, 120_000)) as {
			status: string;
			result: { totalCost: number; awards: { supplier: string; item: string; quantity: number }[] };
		};
		expect(run.status).toBe('done');
		expect(run.result.totalCost).toBeCloseTo(5100, 6);
		expect(run.result.awards.map((l) => [l.supplier, l.item, l.quantity]).sort()).toEqual(
			[
				[b.organisation.name, 'IT-1', 100],
				[a.organisation.name, 'IT-2', 200]
			].sort()
		);
		// The run page: A's price 200 × 20 = 4,000, evaluated 4,080 + 10 = 4,090; B's 1,010 both.
		const runPage = textOf(
			await (await buyer.client.get(`/buyer/events/${event.id}/award/runs/${started.runId}`)).text()
		);
		expect(runPage).toContain('Price and evaluated cost');
		// The run's own costs are evaluated and say so; the total at prices is 1,010 + 4,000 = 5,010 (by hand).
		expect(runPage).toContain(`Total evaluated cost ${formatMoney(5100, 'EUR')} EUR`);
		expect(runPage).toContain(`Total at the suppliers' prices ${formatMoney(5010, 'EUR')} EUR`);
		expect(runPage).toContain('Evaluated unit cost');
		expect(runPage).not.toContain('Total cost ');
		expect(runPage).toContain(
			`${a.organisation.name} ${formatMoney(4000, 'EUR')} ${formatMoney(4090, 'EUR')}`
		);
		expect(runPage).toContain(
			`${b.organisation.name} ${formatMoney(1010, 'EUR')} ${formatMoney(1010, 'EUR')}`
		);
		// The award report's workbook carries the same two columns.
		const justification = 'Lowest evaluated cost, criteria as published.';
		expect((await post(buyer.client, `/api/runs/${started.runId}/submit`, { justification })).status).toBe(
			200
		);
		const report = await buyer.client.get(
			`/api/runs/${started.runId}/report?format=xlsx`,
			'application/json'
		);
		expect(report.status).toBe(200);
		const workbook = new ExcelJS.Workbook();
		await workbook.xlsx.load(await report.arrayBuffer());
		// Its summary names the evaluated total (5,100) and the total at prices (1,010 + 4,000 = 5,010).
		const summary = new Map<unknown, unknown>();
		workbook.getWorksheet('Summary')!.eachRow((r) => summary.set(r.getCell(1).value, r.getCell(2).value));
		expect(summary.get('Total evaluated cost, price and criteria (EUR)')).toBeCloseTo(5100, 6);
		expect(summary.get("Total at the suppliers' prices (EUR)")).toBeCloseTo(5010, 6);
		expect(summary.has('Total cost (EUR)')).toBe(false);
		// The run's own workbook names its costs evaluated too.
		const exported = await buyer.client.get(`/api/runs/${started.runId}/export`);
		const allocation = await sheetRows(exported, 'Allocation');
		expect(Object.keys(allocation[0]!.values)).toContain('Evaluated unit cost (EUR)');
		const sheet = workbook.getWorksheet('Evaluated cost')!;
		expect([2, 3].map((r) => (sheet.getRow(r).values as unknown[]).slice(1))).toEqual(
			[
				[a.organisation.name, 4000, 4090],
				[b.organisation.name, 1010, 1010]
			].sort((x, y) => String(x[0]).localeCompare(String(y[0])))
		);
	}, 150_000);

	it('shows the relative-scoring caution and the rank reversal on these bids', async () => {
		// Price weight 50 %, quality from Service quality. Totals: A 5,000, B 1,010 + 4,100 = 5,110, C 1,200
		// + 4,800 = 6,000. Every bid in (lowest 5,000): B 50 × 5,000/5,110 + 0.5 × 80 = 48.924 + 40 = 88.92;
		// C 50 × 5,000/6,000 + 0.5 × 94.7 = 41.667 + 47.35 = 89.02: C ahead of B. Without A (lowest 5,110):
		// B 50 + 40 = 90; C 50 × 5,110/6,000 + 47.35 = 42.583 + 47.35 = 89.93: B ahead of C.
		const page = await criteriaPage();
		expect(page).toContain('adding or removing a bid can reverse the order of two others');
		expect(page).toContain('Schotanus et al. 2022');
		expect(page).toContain(
			`${b.organisation.name} would rank ahead of ${c.organisation.name}: ${c.organisation.name} 89.02 against ${b.organisation.name} 88.92 with every bid in, 89.93 against 90 without it.`
		);
	});

	it('tells each supplier its own prices, and that bids were compared on evaluated cost', async () => {
		expect(runId).not.toBe('');
		const approvedAfter = new Date();
		const approved = await post(approver.client, `/api/runs/${runId}/decision`, {
			decision: 'approve',
			comment: 'Criteria as published.'
		});
		expect(approved.status).toBe(200);
		// A wins IT-2 at its own 20.00 (evaluated 20.40, lead time 15 days: +2 %): 200 × 20 = 4,000 at its
		// price, 4,080 + 10 (service quality 70) = 4,090 evaluated (by hand, the test above).
		const notice = await latestMailTo(a.user.email, {
			after: approvedAfter,
			subject: /^Award notice/,
			timeoutMs: 20_000
		});
		expect(notice.text).toContain(
			`IT-2: 200 at ${formatUnitPrice(20, 'EUR')} EUR = ${formatMoney(4000, 'EUR')} EUR`
		);
		expect(notice.text).not.toContain(formatUnitPrice(20.4, 'EUR'));
		expect(notice.text).toContain(`Total: ${formatMoney(4000, 'EUR')} EUR`);
		expect(notice.text).toContain(
			`Bids were compared on evaluated cost: the price plus the money value of the criteria published with the event (Lead time, Service quality). Your awarded lines' evaluated cost: ${formatMoney(4090, 'EUR')} EUR`
		);
		const regret = await latestMailTo(c.user.email, {
			after: approvedAfter,
			subject: /^Result of/,
			timeoutMs: 20_000
		});
		expect(regret.text).toContain('Bids were compared on evaluated cost');
		// Its own result page says the same.
		const supplier = await signedIn(a.user);
		const mine = (await (
			await supplier.get(`/api/events/${event.id}/my-result`, 'application/json')
		).json()) as {
			total: number;
			evaluatedTotal: number;
			lines: { item: string; unitPrice: number; cost: number }[];
		};
		expect(mine.lines).toEqual([{ item: 'IT-2', quantity: 200, unitPrice: 20, cost: 4000 }]);
		expect(mine.total).toBe(4000);
		expect(mine.evaluatedTotal).toBeCloseTo(4090, 6);
	}, 60_000);
});
