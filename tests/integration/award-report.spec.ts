import ExcelJS from 'exceljs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { formatMoney } from '../../src/lib/format';
import { formatInZone } from '../../src/lib/time';
import type { Browserless } from '../support/http';
import { closeTestDb, testDb, unique, type TestUser } from '../support/factories';
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
import { finished, post } from '../support/runs';
import { embeddedFonts, pdfText } from '../support/pdf';

afterAll(closeTestDb);

// The acceptance asks for the report of the demo event's approved run. Tests never load the demo seeds,
// so this builds a run of the same shape: an opened EUR event in Europe/Berlin with DAP delivery, two
// bids, the lowest-cost plan run for the comparison, and a plan with two rules (a share cap per item and,
// as the demo's "Dual-source critical items" plan has, a spend cap per lot) run, submitted with a
// justification, approved by someone else and its notices sent.

type Party = { user: TestUser; client: Browserless; organisationId: string; name: string };
const json = async (response: Response) => (await response.json()) as Record<string, unknown>;
const bytes = async (response: Response) => new Uint8Array(await response.arrayBuffer());

interface RunAnswer {
	id: string;
	result: {
		totalCost: number;
		supplierTotals: { supplier: string; cost: number }[];
		awards: { supplier: string; item: string; quantity: number; cost: number }[];
	};
}

let buyer: { user: TestUser; client: Browserless };
let approver: { user: TestUser; client: Browserless };
let auditor: { user: TestUser; client: Browserless };
let a: Party;
let b: Party;
let event: TestEvent;
let lowestRunId: string;
let run: RunAnswer;
let ruleTexts: string[];
let decidedAt: Date;
const justification =
	'Two suppliers on every item keep supply safe; the rules cost little over the lowest cost.';

async function aBidder(): Promise<Party> {
	const { organisation, user } = await aSupplierOrganisationWithUser();
	return { user, client: await signedIn(user), organisationId: organisation.id, name: organisation.name };
}

beforeAll(async () => {
	[buyer, approver, auditor, a, b] = await Promise.all([
		aSignedInUser('buyer'),
		aSignedInUser('approver'),
		aSignedInUser('auditor'),
		aBidder(),
		aBidder()
	]);
	approver.user.name = unique('Approver');
	await testDb()('users').where({ id: approver.user.id }).update({ name: approver.user.name });
	const deadline = new Date(Date.now() + 15_000);
	event = await anOpenEvent({
		createdBy: buyer.user.id,
		invite: [a.organisationId, b.organisationId],
		deadline
	});
	await testDb()('items').where({ event_id: event.id }).update({ baseline_unit_price: 6 });
	for (const [who, prices] of [
		[a, [4, 5, 6]],
		[b, [4.2, 4.9, 6.5]]
	] as const) {
		const sheet = Buffer.from(
			await (await who.client.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer()
		);
		const filled = await fillSheet(sheet, { 'IT-1': [prices[0]], 'IT-2': [prices[1]], 'IT-3': [prices[2]] });
		expect((await uploadSheet(who.client, event.id, filled)).status).toBe(201);
	}
	await untilPast(deadline);

	const plans = (await json(await buyer.client.get(`/api/events/${event.id}/plans`, 'application/json')))
		.plans as { id: string; lowestCost: boolean }[];
	const lowest = await finished(
		buyer.client,
		(await json(await post(buyer.client, `/api/plans/${plans.find((p) => p.lowestCost)!.id}/runs`, {})))
			.runId as string
	);
	lowestRunId = lowest.id as string;
	const made = await json(
		await post(buyer.client, `/api/events/${event.id}/plans`, {
			name: 'Dual sourcing',
			rules: [
				{ type: 'max_share', scope: 'each_item', who: 'each_supplier', percent: 60 },
				{ type: 'max_share', scope: { lot: 'L1' }, who: 'each_supplier', percent: 70, basis: 'spend' }
			]
		})
	);
	const plan = made.plan as { id: string; preview: string[] };
	ruleTexts = plan.preview;
	run = (await finished(
		buyer.client,
		(await json(await post(buyer.client, `/api/plans/${plan.id}/runs`, {}))).runId as string
	)) as unknown as RunAnswer;
}, 120_000);

describe('the award report', () => {
	it('is refused for a run that was never submitted, with the reason', async () => {
		const response = await buyer.client.get(`/api/runs/${lowestRunId}/report?format=pdf`, 'application/json');
		expect(response.status).toBe(409);
		expect((await json(response)).message).toMatch(/neither awaiting sign-off nor approved/);
	});

	it('asks the run page’s submit form for a justification, naming the field when it is missing', async () => {
		const response = await buyer.client.postForm(
			`/buyer/events/${event.id}/award/runs/${run.id}?/submit`,
			{ justification: '   ' },
			'application/json'
		);
		const answer = (await response.json()) as { type: string; status: number; data: string };
		expect(answer).toMatchObject({ type: 'failure', status: 422 });
		expect(answer.data).toContain('justification: say why this run should be awarded');
		expect(await testDb()('signoffs').where({ run_id: run.id }).first()).toBeUndefined();
	});

	it('is made once the run is approved, for the buyer, the approver and the auditor', async () => {
		expect((await post(buyer.client, `/api/runs/${run.id}/submit`, { justification })).status).toBe(200);
		const decided = await post(approver.client, `/api/runs/${run.id}/decision`, {
			decision: 'approve',
			comment: 'Agreed.'
		});
		expect(decided.status).toBe(200);
		decidedAt = new Date((await json(decided)).decidedAt as string);
		// The notices go out from the worker; the report lists their dispatch.
		for (let k = 0; k < 80; k++) {
			const notices = await testDb()('notices').where({ run_id: run.id }).select('status');
			if (notices.length === 2 && notices.every((n) => n.status === 'sent')) break;
			await new Promise((r) => setTimeout(r, 250));
		}
		for (const who of [buyer, approver, auditor]) {
			const response = await who.client.get(`/api/runs/${run.id}/report?format=pdf`, 'application/pdf');
			expect(response.status).toBe(200);
			expect(response.headers.get('content-type')).toBe('application/pdf');
			expect(response.headers.get('content-disposition')).toBe(
				`attachment; filename="award-report-${event.reference}-run-${await runNumber()}.pdf"`
			);
			expect(response.headers.get('cache-control')).toBe('no-store');
		}
	});

	it('is never given to a supplier, not even one that bid', async () => {
		for (const format of ['pdf', 'xlsx']) {
			const response = await a.client.get(`/api/runs/${run.id}/report?format=${format}`, 'application/json');
			expect([403, 404]).toContain(response.status);
			expect(await response.text()).not.toContain(b.name);
		}
	});

	it('carries the totals, every rule, the justification and the sign-off in the PDF’s text', async () => {
		const pdf = await bytes(
			await buyer.client.get(`/api/runs/${run.id}/report?format=pdf`, 'application/pdf')
		);
		const text = await pdfText(pdf);
		expect(text).toContain('Decision support, not a legal award');
		expect(text).toContain(formatMoney(run.result.totalCost, 'EUR'));
		for (const total of run.result.supplierTotals) expect(text).toContain(formatMoney(total.cost, 'EUR'));
		expect(ruleTexts).toHaveLength(2);
		for (const rule of ruleTexts) expect(text).toContain(rule);
		expect(text).toContain(justification);
		expect(text).toContain(`Decided by ${approver.user.name}`);
		expect(text).toContain(`Decided at ${formatInZone(decidedAt, 'Europe/Berlin')} (Europe/Berlin)`);
		expect(text).toContain('Decision Approved');
	});

	it('embeds Public Sans in the PDF and uses no standard PDF font', async () => {
		const pdf = await bytes(
			await buyer.client.get(`/api/runs/${run.id}/report?format=pdf`, 'application/pdf')
		);
		const fonts = embeddedFonts(pdf);
		expect(fonts.baseFonts).toContain('PublicSans-Regular');
		expect(fonts.baseFonts).toContain('PublicSans-Bold');
		expect(fonts.baseFonts.every((f) => f.startsWith('PublicSans-'))).toBe(true);
		expect(fonts.fontFiles).toBeGreaterThanOrEqual(2);
		expect(fonts.standardFonts).toBe(0);
	});

	it('gives the run’s own figures in the workbook: total, supplier totals and every awarded line', async () => {
		const response = await auditor.client.get(`/api/runs/${run.id}/report?format=xlsx`, 'application/json');
		expect(response.headers.get('content-type')).toContain('spreadsheetml');
		const workbook = new ExcelJS.Workbook();
		await workbook.xlsx.load((await response.arrayBuffer()) as ArrayBuffer);
		expect(workbook.worksheets.map((w) => w.name)).toEqual([
			'Summary',
			'Bidders',
			'Rules',
			'Award',
			'Changes',
			'Sign-off',
			'Notices'
		]);
		const rows = (name: string) => {
			const ws = workbook.getWorksheet(name)!;
			const head = (ws.getRow(1).values as unknown[]).slice(1) as string[];
			const out: Record<string, unknown>[] = [];
			ws.eachRow((row, n) => {
				if (n > 1) out.push(Object.fromEntries(head.map((h, k) => [h, row.getCell(k + 1).value])));
			});
			return out;
		};
		const summary = Object.fromEntries(rows('Summary').map((r) => [r.Field, r.Value]));
		expect(summary['Total cost (EUR)']).toBe(run.result.totalCost);

		const bidders = rows('Bidders');
		for (const total of run.result.supplierTotals)
			expect(bidders.find((r) => r.Supplier === total.supplier)?.['Awarded cost (EUR)']).toBe(total.cost);

		const lines = rows('Award').map((r) => ({
			supplier: r.Supplier,
			item: r.Item,
			quantity: r.Quantity,
			cost: r['Cost (EUR)']
		}));
		const awarded = run.result.awards
			.filter((l) => l.quantity > 0)
			.map(({ supplier, item, quantity, cost }) => ({ supplier, item, quantity, cost }));
		const order = (x: { supplier: unknown; item: unknown }) => `${String(x.supplier)}|${String(x.item)}`;
		expect([...lines].sort((p, q) => order(p).localeCompare(order(q)))).toEqual(
			[...awarded].sort((p, q) => order(p).localeCompare(order(q)))
		);

		const rules = rows('Rules');
		expect(rules.map((r) => r.Text)).toEqual(ruleTexts);
		const signoff = rows('Sign-off');
		expect(signoff).toHaveLength(1);
		expect(signoff[0]).toMatchObject({
			Justification: justification,
			Decision: 'approved',
			'Decided by': approver.user.name
		});
		expect(rows('Notices')).toHaveLength(2);
	});
});

async function runNumber(): Promise<number> {
	const row = await testDb()('award_runs').where({ id: run.id }).first('number');
	return Number(row.number);
}
