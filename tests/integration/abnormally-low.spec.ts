// Abnormally low bids (EU Directive 2014/24/EU Art. 69: ask the supplier to explain before rejecting): the
// screen flags a planted line and not its neighbours, the buyer's request, the recorded answer and the
// exclusion reach the decision trail, and a run started after the exclusion leaves the line out of its
// stored problem and records the exclusion. Prices are invented.
//
// Items IT-1 (100 units), IT-2 (200), IT-3 (300), baselines 10, 20 and 3; bids A, B, C, D:
//   IT-1: 10, 10.5, 11, 5 (D planted)   IT-2: 20, 21, 19, 20   IT-3: 3, 3, 3.1, 3
// By hand, with the screen's rules (src/lib/abnormally-low.ts: 30 % below the median of at least 3 other
// bids, or below the baseline): D on IT-1 has others 10, 10.5, 11, median 10.5, 0.7 × 10.5 = 7.35 > 5;
// baseline 0.7 × 10 = 7 > 5: flagged. A on IT-1 has others 5, 10.5, 11, median 10.5: 10 ≥ 7.35, not
// flagged; C on IT-2 (19) against 20, 20, 21: 0.7 × 20 = 14 ≤ 19; IT-3 every price within 4 %. D's total
// 100 × 5 + 200 × 20 + 300 × 3 = 5,400 against A 5,900, B 6,150, C 5,830 on the same items: ratios 0.915,
// 0.878, 0.926, median 0.915 ≥ 0.7; against the baseline 1,000 + 4,000 + 900 = 5,900: 5,400 ≥ 4,130. So
// exactly one flag: D on IT-1.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
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
import type { Browserless } from '../support/http';
import { textOf } from '../support/html';
import { latestMailTo } from '../support/mail';
import { finished, post } from '../support/runs';
import { sheetRows } from '../support/workbook';

afterAll(closeTestDb);

let buyer: Browserless;
let bidders: Awaited<ReturnType<typeof aSupplierOrganisationWithUser>>[];
const supplierClients: Browserless[] = [];
let event: TestEvent;
const deadline = new Date(Date.now() + 15_000);
const PRICES = [
	[10, 20, 3],
	[10.5, 21, 3],
	[11, 19, 3.1],
	[5, 20, 3]
];

const D = () => bidders[3]!.organisation;
const reviewPath = () => `/buyer/events/${event.id}/bids/low`;
const action = (name: string, fields: Record<string, string>) =>
	buyer.postForm(`${reviewPath()}?/${name}`, fields);
const trail = (action: string) =>
	testDb()('trail_entries').where({ event_id: event.id, action }).orderBy('seq');

beforeAll(async () => {
	const staff = await aSignedInUser('buyer');
	buyer = staff.client;
	bidders = await Promise.all([0, 1, 2, 3].map(() => aSupplierOrganisationWithUser()));
	event = await anOpenEvent({
		createdBy: staff.user.id,
		invite: bidders.map((b) => b.organisation.id),
		deadline
	});
	for (const [ref, baseline] of [
		['IT-1', 10],
		['IT-2', 20],
		['IT-3', 3]
	] as const)
		await testDb()('items').where({ event_id: event.id, ref }).update({ baseline_unit_price: baseline });
	await Promise.all(
		bidders.map(async (b, k) => {
			const client = await signedIn(b.user);
			supplierClients[k] = client;
			const sheet = Buffer.from(await (await client.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer());
			const [p1, p2, p3] = PRICES[k]!;
			const filled = await fillSheet(sheet, { 'IT-1': [p1!], 'IT-2': [p2!], 'IT-3': [p3!] });
			expect((await uploadSheet(client, event.id, filled)).status).toBe(201);
		})
	);
	await untilPast(deadline);
}, 60_000);

describe('abnormally low bids', () => {
	it('flags the planted line on the tabulation and the review, and not its neighbours', async () => {
		const bids = await (await buyer.get(`/buyer/events/${event.id}/bids`)).text();
		expect(bids.match(/data-low-price/g)).toHaveLength(1);
		expect(textOf(bids)).toContain('1 line is flagged');
		const review = await buyer.get(reviewPath());
		expect(review.status).toBe(200);
		const rows = [...(await review.text()).matchAll(/<tr data-testid="low-flag">([\s\S]*?)<\/tr>/g)].map(
			(m) => textOf(m[1]!)
		);
		expect(rows).toHaveLength(1);
		// 1 − 5/10.5 = 52.4 % below the median 10.50; 1 − 5/10 = 50 % below the baseline 10.00 (by hand, above).
		expect(rows[0]).toContain(D().name);
		expect(rows[0]).toContain('line IT-1');
		expect(rows[0]).toContain('52.4 % below the median of the 3 other bids');
		expect(rows[0]).toContain('50 % below the baseline');
		// The buyer is told that an exclusion outlives a round (services/abnormally-low.ts keeps it per
		// supplier and item until undone).
		expect(textOf(await (await buyer.get(reviewPath())).text())).toContain(
			"An exclusion stands in later rounds too, whatever the supplier's revised price, until you undo it with a reason below."
		);

		// The workbook lists the same one flag, and notes it on D's IT-1 price and on no other cell.
		const download = await buyer.get(`/api/events/${event.id}/tabulation?format=xlsx`);
		expect(download.status).toBe(200);
		const listed = await sheetRows(download.clone(), 'Low prices');
		expect(
			listed.map((r) => [
				r.values.Supplier,
				r.values.Item,
				r.values['Price as bid, without freight and duty (EUR)']
			])
		).toEqual([[D().name, 'IT-1', 5]]);
		expect(String(listed[0]!.values['Why it is flagged'])).toContain(
			'52.4 % below the median of the 3 other bids'
		);
		const prices = await sheetRows(download, 'Prices');
		const noted = prices.flatMap((r) => Object.keys(r.notes).map((column) => [r.values.Item, column]));
		expect(noted).toEqual([['IT-1', D().name]]);
	});

	it('refuses bad requests, answers and exclusions with a message naming the field', async () => {
		const cases: [string, Record<string, string>, number, string][] = [
			['ask', { supplier: D().id, item: 'IT-1', question: '  ' }, 422, 'Question: write what the supplier'],
			['ask', { supplier: D().id, item: 'IT-9', question: 'Why?' }, 422, 'Line: there is no item “IT-9”'],
			['ask', { supplier: 'nobody', item: '', question: 'Why?' }, 422, 'Supplier: choose a supplier'],
			['answer', { inquiry: 'x', answer: '' }, 422, 'Answer: write the supplier’s answer'],
			['exclude', { supplier: D().id, item: 'IT-1', reason: '' }, 422, 'Reason: give the reason'],
			// Art. 69: not asked yet, and "exclude without an answer" not ticked.
			['exclude', { supplier: D().id, item: 'IT-1', reason: 'Too low' }, 409, 'Without answer:']
		];
		for (const [name, fields, status, message] of cases) {
			const response = await action(name, fields);
			expect(response.status, `${name} ${JSON.stringify(fields)}`).toBe(status);
			expect(textOf(await response.text())).toContain(message);
		}
		expect(await trail('bid line excluded')).toHaveLength(0);
	});

	it('records the request (mailed to the supplier) and the answer in the trail, then the exclusion', async () => {
		const asked = await action('ask', {
			supplier: D().id,
			item: 'IT-1',
			question: 'How does 5.00 a unit cover the material cost of IT-1?'
		});
		expect(asked.status).toBe(200);
		const mail = await latestMailTo(bidders[3]!.user.email, { subject: /^Please explain your price/ });
		expect(mail.text).toContain('How does 5.00 a unit cover the material cost of IT-1?');
		const [request] = await trail('price explanation requested');
		expect(request.detail).toMatchObject({ supplier: D().name, item: 'IT-1' });
		const answered = await action('answer', {
			inquiry: String(request.detail.inquiry),
			answer: 'A one-off clearance of stock bought last year.'
		});
		expect(answered.status).toBe(200);
		const [answer] = await trail('price explanation recorded');
		expect(answer.detail).toMatchObject({
			inquiry: request.detail.inquiry,
			answer: 'A one-off clearance of stock bought last year.'
		});
		const excluded = await action('exclude', {
			supplier: D().id,
			item: 'IT-1',
			reason: 'Stock clearance cannot be relied on for the contract term.'
		});
		expect(excluded.status).toBe(200);
		const [exclusion] = await trail('bid line excluded');
		expect(exclusion.detail).toMatchObject({ supplier: D().name, item: 'IT-1', explanation: 'answered' });
		expect(exclusion.seq).toBeGreaterThan(answer.seq);
	});

	it('leaves the excluded line out of a run’s problem and shows the exclusion on the run page', async () => {
		const plans = (await (await buyer.get(`/api/events/${event.id}/plans`, 'application/json')).json()) as {
			plans: { id: string; lowestCost: boolean }[];
		};
		const started = (await (
			await post(buyer, `/api/plans/${plans.plans.find((p) => p.lowestCost)!.id}/runs`, {})
		).json()) as { runId: string };
		const run = await testDb()('award_runs').where({ id: started.runId }).first();
		const lines = (run.problem.bids as { supplier: string; item: string }[]).map(
			(b) => `${b.supplier}|${b.item}`
		);
		expect(lines).not.toContain(`${D().name}|IT-1`);
		expect(lines).toContain(`${D().name}|IT-2`);
		expect(lines).toHaveLength(11);
		expect(run.excluded).toMatchObject([{ supplier: D().name, item: 'IT-1' }]);
		await finished(buyer, started.runId, 120_000);
		const page = textOf(
			await (await buyer.get(`/buyer/events/${event.id}/award/runs/${started.runId}`)).text()
		);
		expect(page).toContain('This run was built without these excluded bids or lines:');
		expect(page).toContain(`${D().name}, line IT-1: Stock clearance cannot be relied on`);
	});

	it('lets the supplier answer a request on its own page, and no other supplier', async () => {
		expect(
			(
				await action('ask', {
					supplier: D().id,
					item: '',
					question: 'Explain how your total covers the costs.'
				})
			).status
		).toBe(200);
		const [, whole] = await trail('price explanation requested');
		const inquiry = String(whole.detail.inquiry);
		const page = `/supplier/events/${event.id}/explanations`;
		const [a, d] = [supplierClients[0]!, supplierClients[3]!];
		expect(textOf(await (await d.get(page)).text())).toContain('Explain how your total covers the costs.');
		expect(await (await a.get(page)).text()).not.toContain('data-testid="supplier-inquiry"');
		const stranger = await a.postForm(`${page}?/answer`, { inquiry, answer: 'Not mine to answer.' });
		expect(stranger.status).toBe(404);
		const empty = await d.postForm(`${page}?/answer`, { inquiry, answer: ' ' });
		expect(empty.status).toBe(422);
		expect(textOf(await empty.text())).toContain('Answer: write your explanation of the price.');
		const answered = await d.postForm(`${page}?/answer`, { inquiry, answer: 'Our own plant; no freight.' });
		expect(answered.status).toBe(200);
		const [entry] = await trail('price explanation answered by the supplier');
		expect(entry.detail).toMatchObject({ inquiry, item: null, answer: 'Our own plant; no freight.' });
	});

	it('undoes an exclusion only with a reason, and records it', async () => {
		const [standing] = await testDb()('bid_exclusions').where({ event_id: event.id }).whereNull('undone_at');
		const refused = await action('undo', { exclusion: standing.id, reason: '' });
		expect(refused.status).toBe(422);
		expect(textOf(await refused.text())).toContain(
			'Reason: give the reason for taking the line or bid back.'
		);
		expect(
			(await action('undo', { exclusion: standing.id, reason: 'Counsel advised to keep it.' })).status
		).toBe(200);
		const [undone] = await trail('exclusion undone');
		expect(undone.detail).toMatchObject({ item: 'IT-1', reason: 'Counsel advised to keep it.' });
	});
});
