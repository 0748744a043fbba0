// A database blip is an outage, not a sign-out, with the real PostgreSQL of the stack under test: it is
// stopped (fast shutdown, as `pg_ctl stop -m fast`) for 5 s and started again by the stack's supervisor on
// the same port and data folder. Before: the session check read the failure as "no session", cleared the
// cookie and sent the person to sign in; the web server could crash on the auth pool's unhandled error.
// A browser test file because it takes the database away from everything else: the browser tests run one
// file at a time, after the unit and integration tests.
import PgBoss from 'pg-boss';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { generateProblem } from '../../src/lib/award/tools/generate';
import { databaseUrl } from '../support/env';
import {
	aSignedInUser,
	aSupplierOrganisationWithUser,
	anOpenEvent,
	aStoredRun,
	TWO_BID_PROBLEM
} from '../support/events';
import { aUser, closeTestDb, testDb } from '../support/factories';
import { isRunning, readStackPids, stopPostgres, until } from '../support/stack';

const postgresPort = () => Number(new URL(databaseUrl()).port);
const stackPids = () => readStackPids(process.env.STACK_CONTROL_DIR ?? join('/nonexistent'));
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

let boss: PgBoss;
/** The run that was solving when PostgreSQL stopped. */
let inProgress: string | undefined;
let postgresStoppedAt = 0;
beforeAll(async () => {
	boss = new PgBoss({ connectionString: databaseUrl(), max: 2, supervise: false, schedule: false });
	// This test's own queue client sees the outage too.
	boss.on('error', () => undefined);
	await boss.start();
});
afterAll(async () => {
	await boss.stop({ graceful: false, wait: true }).catch(() => undefined);
	await closeTestDb();
});

/** A run queued for the worker; a large problem (a few seconds of solving) when `slow`. */
async function aQueuedRun(slow: boolean) {
	const buyer = await aUser('buyer');
	const { organisation } = await aSupplierOrganisationWithUser();
	const event = await anOpenEvent({ createdBy: buyer.id, invite: [organisation.id] });
	const problem = slow
		? generateProblem({ items: 400, suppliers: 16, seed: 7, priceBreaks: true, bundles: 20, capacity: true })
		: TWO_BID_PROBLEM;
	const run = await aStoredRun({
		eventId: event.id,
		createdBy: buyer.id,
		problem,
		fields: { status: 'queued', attempts: 0 }
	});
	await boss.send('award-run', { runId: run.id });
	return run.id as string;
}

const runStatus = async (runId: string) =>
	((await testDb()('award_runs').where({ id: runId }).first('status')) as { status: string }).status;

describe('PostgreSQL stopped for 5 s and started again', () => {
	it('keeps sessions (503 meanwhile), the web server and the worker, which takes jobs after', async () => {
		const { client } = await aSignedInUser('buyer');
		const before = await client.get('/account');
		expect(before.status).toBe(200);
		const cookiesBefore = client.copy();
		const { services } = stackPids();
		const worker = services.worker!;
		const web = services.web!;

		const run = await aQueuedRun(true);
		inProgress = run;
		await until(async () => (await runStatus(run)) === 'running', 'the run to start', 60_000);

		const postgres = await stopPostgres(postgresPort());
		const stoppedAt = Date.now();
		postgresStoppedAt = stoppedAt;
		let outage: { page: Response; pageText: string; api: Response };
		try {
			const page = await client.get('/account');
			outage = {
				page,
				pageText: await page.text(),
				api: await client.request('/api/me', { accept: 'application/json' })
			};
			await sleep(5_000 - (Date.now() - stoppedAt));
		} finally {
			await postgres.restart();
		}

		// During the outage: "unavailable", not "sign in"; the cookie was not cleared.
		expect(outage.page.status).toBe(503);
		expect(outage.page.headers.get('location')).toBeNull();
		expect(outage.pageText).toContain('Tenderloom cannot reach its database; try again in a minute.');
		expect(outage.api.status).toBe(503);
		expect(
			outage.page.headers.getSetCookie().filter((c) => /max-age=0|expires=thu, 01 jan 1970/i.test(c))
		).toEqual([]);

		// After: the same cookie works (also a copy taken before the outage), in the same processes.
		await until(async () => (await client.get('/account')).status === 200, 'the account page again', 30_000);
		expect((await cookiesBefore.get('/account')).status).toBe(200);
		expect(isRunning(web) && stackPids().services.web).toBe(web);
		expect(isRunning(worker) && stackPids().services.worker).toBe(worker);

		// The worker still takes jobs: a run started after the restart finishes.
		const after = await aQueuedRun(false);
		await until(async () => (await runStatus(after)) === 'done', 'the run sent after the restart', 60_000);
	}, 180_000);

	// The run that was solving during the blip: its end is written by jobs/award-runs.ts (the jobs stream's
	// file), which does not retry its writes; see the report of the procs stream.
	it('finishes the run that was in progress during the blip', async () => {
		expect(inProgress, 'the test above started a run').toBeDefined();
		await until(
			async () => ['done', 'failed', 'cancelled'].includes(await runStatus(inProgress!)),
			'the run in progress during the blip to end',
			90_000
		);
		const run = await testDb()('award_runs')
			.where({ id: inProgress })
			.first('status', 'error', 'finished_at');
		expect(run).toMatchObject({ status: 'done' });
		// It was solving while the database was away: it ended after the stop.
		expect((run.finished_at as Date).getTime()).toBeGreaterThan(postgresStoppedAt);
	}, 120_000);
});
