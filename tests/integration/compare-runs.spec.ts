// Runs compared, from outside: two stored runs that allocate differently, the page's totals and the
// items allocated differently, the workbook, and the page that asks for runs when too few are chosen.
// The expected figures are worked out here from the stored results, not by the app's own code.
import ExcelJS from 'exceljs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeTestDb, testDb } from '../support/factories';
import { aSignedInUser, anOpenEvent, type TestEvent } from '../support/events';
import {
	CAPPED as capped,
	comparedProblem as problem,
	LOWEST as lowest,
	twoComparedRuns,
	type StoredLine
} from '../support/compared-runs';
import type { Browserless } from '../support/http';
import type { TestUser } from '../support/factories';

afterAll(async () => {
	await closeTestDb();
});

const euro = new Intl.NumberFormat('en', { minimumFractionDigits: 2, maximumFractionDigits: 2 });
const signed = (value: number) =>
	Math.abs(value) < 0.005 ? '±0.00' : `${value > 0 ? '+' : '−'}${euro.format(Math.abs(value))}`;
const itemCost = (awards: StoredLine[], item: string) =>
	awards.filter((l) => l.item === item).reduce((sum, l) => sum + l.cost, 0);

let buyer: { user: TestUser; client: Browserless };
let event: TestEvent;
let first: string;
let second: string;

beforeAll(async () => {
	buyer = await aSignedInUser('buyer');
	event = await anOpenEvent({ createdBy: buyer.user.id, invite: [] });
	[first, second] = await twoComparedRuns(event.id, buyer.user.id);
});

const comparePage = (query: string) => buyer.client.get(`/buyer/events/${event.id}/award/compare?${query}`);

/** The page's text without Svelte's hydration comments. */
const html = async (response: Response) => (await response.text()).replace(/<!--[\s\S]*?-->/g, '');

/** A cell's text by its test id and run number. */
const cells = (text: string, testId: string) =>
	Object.fromEntries(
		[...text.matchAll(new RegExp(`data-testid="${testId}" data-run="(\\d+)"[^>]*>([^<]*)<`, 'g'))].map(
			(m) => [Number(m[1]), m[2]!.trim()]
		)
	);

describe('two runs compared', () => {
	it('shows each run’s total and the items allocated differently with each one’s cost difference', async () => {
		const response = await comparePage(`run=${first}&run=${second}`);
		expect(response.status).toBe(200);
		const text = await html(response);
		// 4,250 + 6,200 + 4,500 = 14,950 and 2,550 + 1,800 + 3,720 + 2,640 + 2,100 + 2,700 = 15,510.
		expect(cells(text, 'total-cost')).toEqual({
			1: euro.format(lowest.totalCost),
			2: euro.format(capped.totalCost)
		});
		expect(cells(text, 'total-cost')).toEqual({ 1: '14,950.00', 2: '15,510.00' });
		// The cheaper run is the reference: the other differs by 15,510 − 14,950.
		expect(cells(text, 'difference')[2]).toBe(signed(capped.totalCost - lowest.totalCost));

		const expected = ['IT-1', 'IT-2', 'IT-3']
			.map((item) => ({
				item,
				costs: [itemCost(lowest.awards, item), itemCost(capped.awards, item)],
				difference: itemCost(capped.awards, item) - itemCost(lowest.awards, item)
			}))
			.sort((a, b) => Math.abs(b.difference) - Math.abs(a.difference));
		const differing = text.slice(text.indexOf('data-testid="differing"'));
		const rows = [...differing.matchAll(/<tr[^>]*data-item="([^"]+)"[^>]*>([\s\S]*?)<\/tr>/g)];
		expect(rows.map((r) => r[1])).toEqual(expected.map((e) => e.item));
		for (const [k, row] of rows.entries()) {
			const want = expected[k]!;
			expect(cells(row[2]!, 'item-cost')).toEqual({
				1: euro.format(want.costs[0]!),
				2: euro.format(want.costs[1]!)
			});
			expect(cells(row[2]!, 'item-difference')[2]).toBe(signed(want.difference));
		}
		// IT-3 in the capped run: 1,200 KGM from S1 and 1,800 KGM from S2, shown by the unit's name (KGM is
		// the kilogram in UN/CEFACT Recommendation 20).
		expect(rows[0]![2]).toContain('S1: 1,200 kg');
		expect(rows[0]![2]).toContain('S2: 1,800 kg');
	});

	it('exports a workbook whose figures are the runs’', async () => {
		const response = await buyer.client.get(
			`/api/events/${event.id}/compare?run=${first}&run=${second}&format=xlsx`,
			'application/json'
		);
		expect(response.status).toBe(200);
		expect(response.headers.get('content-type')).toContain('spreadsheetml');
		const workbook = new ExcelJS.Workbook();
		await workbook.xlsx.load((await response.arrayBuffer()) as ArrayBuffer);
		expect(workbook.worksheets.map((w) => w.name)).toEqual(['Summary', 'Suppliers', 'Lots', 'Differences']);

		const summary = workbook.getWorksheet('Summary')!;
		expect(summary.views[0]).toMatchObject({ state: 'frozen', ySplit: 1 });
		expect([2, 3].map((r) => summary.getRow(r).getCell(5).value)).toEqual([
			lowest.totalCost,
			capped.totalCost
		]);
		expect(summary.getRow(3).getCell(7).value).toBe(capped.savings);
		expect(summary.getRow(3).getCell(9).value).toBe(capped.totalCost - lowest.totalCost);
		expect(summary.getRow(2).getCell(5).numFmt).toBe('#,##0.00');

		const lots = workbook.getWorksheet('Lots')!;
		// L1 is IT-1 and IT-2; IT-3 has no lot.
		const lotRows = [2, 3, 4].map((r) => [1, 2, 3].map((c) => lots.getRow(r).getCell(c).value));
		expect(lotRows).toEqual([
			[
				'L1',
				itemCost(lowest.awards, 'IT-1') + itemCost(lowest.awards, 'IT-2'),
				itemCost(capped.awards, 'IT-1') + itemCost(capped.awards, 'IT-2')
			],
			['No lot', itemCost(lowest.awards, 'IT-3'), itemCost(capped.awards, 'IT-3')],
			['Total', lowest.totalCost, capped.totalCost]
		]);

		const differences = workbook.getWorksheet('Differences')!;
		expect(differences.autoFilter).toBeTruthy();
		const items = [2, 3, 4].map((r) => differences.getRow(r));
		expect(items.map((r) => r.getCell(1).value)).toEqual(['IT-3', 'IT-2', 'IT-1']);
		for (const row of items) {
			const item = String(row.getCell(1).value);
			expect(row.getCell(5).value).toBe(itemCost(lowest.awards, item));
			expect(row.getCell(8).value).toBe(itemCost(capped.awards, item));
			expect(row.getCell(9).value).toBe(itemCost(capped.awards, item) - itemCost(lowest.awards, item));
			expect(row.getCell(8).numFmt).toBe('#,##0.00');
		}
	});

	it('shows an adjusted run as adjusted from its run, with its number of manual changes', async () => {
		const from = await testDb()('award_runs').where({ id: second }).first();
		const change = (item: string) => ({
			kind: 'lock',
			item,
			supplier: 'S1',
			justification: 'Tooling already at S1',
			costChange: 10,
			by: { id: buyer.user.id, name: 'Buyer' },
			at: new Date().toISOString()
		});
		const [adjusted] = await testDb()('award_runs')
			.insert({
				event_id: event.id,
				plan_id: from.plan_id,
				number: 3,
				plan_name: from.plan_name,
				status: 'done',
				problem: JSON.stringify(from.problem),
				problem_sha256: from.problem_sha256,
				result: JSON.stringify(capped),
				created_by: buyer.user.id,
				finished_at: new Date(),
				explanation_status: 'not_needed',
				adjusted_from: second,
				adjustments: JSON.stringify([change('IT-1'), change('IT-2')])
			})
			.returning('id');
		const text = await html(await comparePage(`run=${first}&run=${adjusted.id as string}`));
		expect(text).toMatch(/adjusted from <a [^>]*>run 2<\/a>/);
		expect(text).toContain('2 manual changes');
	});
});

describe('too few runs chosen', () => {
	it('answers a 200 page that says so and offers the finished runs to choose from', async () => {
		const response = await comparePage(`run=${first}`);
		expect(response.status).toBe(200);
		const text = await html(response);
		expect(text).toContain('One run was chosen: choose two to four runs to compare.');
		const chooser = text.slice(text.indexOf('data-testid="run-chooser"'));
		const boxes = [...chooser.matchAll(/<input type="checkbox" name="run" value="([^"]+)"([^>]*)>/g)];
		expect(boxes.map((b) => [b[1], b[2]!.includes('checked')])).toEqual(
			expect.arrayContaining([
				[first, true],
				[second, false]
			])
		);
		expect(chooser).toContain('Run 1 · Lowest cost (no rules) ·');
		expect(chooser).toContain('14,950.00');
	});

	it('says which run cannot be compared when one has not finished', async () => {
		const queued = await testDb()('award_runs')
			.insert({
				event_id: event.id,
				plan_id: (await testDb()('award_runs').where({ id: first }).first()).plan_id,
				number: 9,
				plan_name: 'Lowest cost (no rules)',
				status: 'queued',
				problem: JSON.stringify(problem([])),
				problem_sha256: 'c'.repeat(64),
				created_by: buyer.user.id
			})
			.returning('id');
		const response = await comparePage(`run=${first}&run=${queued[0].id as string}`);
		expect(response.status).toBe(200);
		expect(await html(response)).toContain('Run 9 cannot be compared: it has not finished yet.');
	});

	it('answers the API with 400 and the message', async () => {
		const response = await buyer.client.get(
			`/api/events/${event.id}/compare?run=${first}`,
			'application/json'
		);
		expect(response.status).toBe(400);
		expect(((await response.json()) as { message: string }).message).toContain('choose two to four');
	});
});

describe('a run that is not one of the event’s', () => {
	it('is the 404 of a run that does not exist, even when it is the only one chosen', async () => {
		const other = await anOpenEvent({ createdBy: buyer.user.id, invite: [] });
		expect((await buyer.client.get(`/buyer/events/${other.id}/award/compare?run=${first}`)).status).toBe(404);
		const unknown = '00000000-0000-4000-8000-000000000000';
		expect((await comparePage(`run=${first}&run=${unknown}`)).status).toBe(404);
	});
});
