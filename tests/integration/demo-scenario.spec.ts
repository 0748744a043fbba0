import ExcelJS from 'exceljs';
import knex, { type Knex } from 'knex';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { formatMoney } from '../../src/lib/format';
import { scratchDatabase } from '../support/scratch-database';
import { pdfText } from '../support/pdf';

// The demo scenario as `npm start` loads it (seeds/), in a scratch database: loaded twice, it holds each
// thing once; and the award report of its awarded event's approved run carries that run's figures. The
// other tests never rely on the demo; this one runs the seeds as `npm run db:seed` does, with tsx, and
// then reads the report in this process, through the app's services pointed at the scratch database.
const scratch = scratchDatabase(`tenderloom_demo_${process.pid}`);
const dbScript = (command: string) => scratch.script(command, { app: true });

let db: Knex;
const testDatabaseUrl = process.env.DATABASE_URL;

beforeAll(async () => {
	await scratch.drop();
	await scratch.create();
	dbScript('migrate');
	db = knex({ client: 'pg', connection: scratch.url(), pool: { min: 0, max: 2 } });
}, 60_000);

afterAll(async () => {
	const { closeDb } = await import('../../src/lib/server/db/knex');
	await closeDb();
	process.env.DATABASE_URL = testDatabaseUrl;
	await db?.destroy();
	await scratch.drop();
});

const count = async (table: string) => Number((await db(table).count({ n: '*' }).first())?.n);

describe('the demo scenario', () => {
	it(
		'loads twice without duplicating anything, and its pallets event ends awarded',
		{ timeout: 240_000 },
		async () => {
			dbScript('seed');
			const first = {
				runs: await count('award_runs'),
				signoffs: await count('signoffs'),
				notices: await count('notices'),
				trail: await count('trail_entries')
			};
			dbScript('seed');
			// seeds/data/demo-accounts.ts: 5 staff and 8 supplier users in 1 buying and 8 supplier organisations
			expect(await count('users')).toBe(13);
			expect(await count('organisations')).toBe(9);
			// seeds/02_demo_events.ts: three events; the journey of 03_demo_award_journey.ts is not repeated
			expect(await count('events')).toBe(3);
			expect({
				runs: await count('award_runs'),
				signoffs: await count('signoffs'),
				notices: await count('notices'),
				trail: await count('trail_entries')
			}).toEqual(first);
			expect(first).toMatchObject({ runs: 2, signoffs: 1, notices: 4 });

			const event = await db('events').where({ reference: 'FP-2026-PAL' }).first();
			expect(event.state).toBe('awarded');
			const signoff = await db('signoffs').where({ run_id: event.awarded_run_id }).first();
			expect(signoff).toMatchObject({ decision: 'approve' });
			expect(signoff.justification).toMatch(/second source/);
			expect(signoff.decided_by).not.toBe(signoff.submitted_by);
			const actions = (
				await db('trail_entries').where({ event_id: event.id }).orderBy('seq').select('action')
			).map((r) => r.action);
			expect(actions).toEqual(
				expect.arrayContaining([
					'demo data loaded',
					'award run queued',
					'run submitted for sign-off',
					'run approved'
				])
			);
		}
	);

	describe('the award report of the demo’s approved run', () => {
		let run: {
			id: string;
			result: {
				totalCost: number;
				supplierTotals: { supplier: string; cost: number }[];
				awards: { supplier: string; item: string; quantity: number; unitPrice: number; cost: number }[];
			};
		};
		let report: typeof import('../../src/lib/server/reports/award-report');
		let approver: import('../../src/lib/server/auth/session-user').SessionUser;

		beforeAll(async () => {
			const event = await db('events').where({ reference: 'FP-2026-PAL' }).first();
			run = await db('award_runs').where({ id: event.awarded_run_id }).first('id', 'result');
			const user = await db('users as u')
				.join('organisations as o', 'o.id', 'u.organisation_id')
				.where('u.email', 'approver@fernhollow.test')
				.first('u.id', 'u.name', 'u.email', 'u.role', 'u.organisation_id', 'o.name as organisation_name');
			approver = {
				id: user.id,
				name: user.name,
				email: user.email,
				role: user.role,
				organisationId: user.organisation_id,
				organisationName: user.organisation_name
			};
			// The app's services read DATABASE_URL once, at their first query: point them at the scratch
			// database, as the app's role (this file runs in a process of its own).
			process.env.DATABASE_URL = scratch.appUrl();
			report = await import('../../src/lib/server/reports/award-report');
		});

		it('prices every awarded line as its supplier’s stored bid, and keeps each lot’s 60% cap', async () => {
			// Recomputed here from the stored bid lines, not from the engine: each awarded line at the unit
			// price of its supplier's bid (no breaks in this event), and each supplier's spend per lot.
			const lines = await db('bid_lines as l')
				.join('bid_revisions as r', 'r.id', 'l.revision_id')
				.join('organisations as o', 'o.id', 'r.supplier_organisation_id')
				.join('items as i', 'i.id', 'l.item_id')
				.join('lots as lot', 'lot.id', 'i.lot_id')
				.join('events as e', 'e.id', 'r.event_id')
				.where('e.reference', 'FP-2026-PAL')
				.select('o.name as supplier', 'i.ref as item', 'lot.ref as lot', 'l.unit_price');
			const price = new Map(lines.map((l) => [`${l.supplier}|${l.item}`, Number(l.unit_price)]));
			const lotOf = new Map(lines.map((l) => [l.item as string, l.lot as string]));
			let total = 0;
			const spend = new Map<string, number>();
			for (const line of run.result.awards.filter((a) => a.quantity > 0)) {
				const unit = price.get(`${line.supplier}|${line.item}`);
				expect(unit, `${line.supplier} bid on ${line.item}`).toBeDefined();
				expect(line.cost).toBeCloseTo(line.quantity * unit!, 6);
				total += line.quantity * unit!;
				const key = `${lotOf.get(line.item)}|${line.supplier}`;
				spend.set(key, (spend.get(key) ?? 0) + line.quantity * unit!);
			}
			expect(run.result.totalCost).toBeCloseTo(total, 4);
			for (const lot of ['P1', 'P2']) {
				const lotSpend = [...spend].filter(([k]) => k.startsWith(`${lot}|`));
				const lotTotal = lotSpend.reduce((a, [, v]) => a + v, 0);
				for (const [key, value] of lotSpend) expect(value / lotTotal, key).toBeLessThanOrEqual(0.6 + 1e-6);
			}
		});

		it('carries the totals, both rules and the sign-off in the PDF’s text', { timeout: 60_000 }, async () => {
			const { awardReportPdf } = await import('../../src/lib/server/reports/award-report-pdf');
			const made = await report.awardReport(approver, run.id);
			const text = await pdfText(new Uint8Array(await awardReportPdf(made)));
			expect(text).toContain('Pallets and strapping 2026');
			expect(text).toContain(formatMoney(run.result.totalCost, 'EUR'));
			for (const total of run.result.supplierTotals) expect(text).toContain(formatMoney(total.cost, 'EUR'));
			expect(made.rules).toHaveLength(2);
			for (const lot of ['P1', 'P2']) expect(made.rules.some((r) => r.text.includes(lot))).toBe(true);
			for (const rule of made.rules) expect(text).toContain(rule.text);
			expect(text).toContain('Decided by Hedda Corran');
			expect(text).toContain('Decision Approved');
			expect(text).toMatch(/second source/);
		});

		it('gives the run’s own figures in the workbook', { timeout: 60_000 }, async () => {
			const { awardReportWorkbook } = await import('../../src/lib/server/reports/award-report-sheet');
			const workbook = new ExcelJS.Workbook();
			const bytes = await awardReportWorkbook(await report.awardReport(approver, run.id));
			await workbook.xlsx.load(bytes as unknown as ArrayBuffer);
			const summary = workbook.getWorksheet('Summary')!;
			const values = new Map<string, unknown>();
			summary.eachRow((row) => values.set(String(row.getCell(1).value), row.getCell(2).value));
			expect(values.get('Total cost (EUR)')).toBe(run.result.totalCost);
			const awarded = workbook.getWorksheet('Award')!;
			expect(awarded.rowCount - 1).toBe(run.result.awards.filter((a) => a.quantity > 0).length);
		});
	});
});
