import PgBoss from 'pg-boss';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { MAX_RESTARTS } from '../../src/lib/server/services/run-execution';
import { aUser, closeTestDb, testDb } from '../support/factories';
import {
	aSignedInUser,
	aSupplierOrganisationWithUser,
	anOpenEvent,
	aStoredRun,
	TWO_BID_PROBLEM,
	signedIn
} from '../support/events';
import { databaseUrl } from '../support/env';

let boss: PgBoss;
beforeAll(async () => {
	boss = new PgBoss({ connectionString: databaseUrl(), max: 2 });
	await boss.start();
});
afterAll(async () => {
	await boss.stop({ graceful: false, wait: true });
	await closeTestDb();
});

const problem = TWO_BID_PROBLEM;

async function aRunLeftRunning(startedMinutesAgo: number, status = 'running') {
	const buyer = await aUser('buyer');
	const { organisation } = await aSupplierOrganisationWithUser();
	const event = await anOpenEvent({ createdBy: buyer.id, invite: [organisation.id] });
	const run = await aStoredRun({
		eventId: event.id,
		createdBy: buyer.id,
		problem,
		fields: {
			status,
			attempts: 1,
			started_at: status === 'running' ? new Date(Date.now() - startedMinutesAgo * 60_000) : null
		}
	});
	return { runId: run.id as string, buyer };
}

async function until(runId: string, done: (run: Record<string, unknown>) => boolean, seconds: number) {
	for (let k = 0; k < seconds * 4; k++) {
		const run = await testDb()('award_runs').where({ id: runId }).first();
		if (done(run)) return run;
		await new Promise((r) => setTimeout(r, 250));
	}
	throw new Error('the run did not change in time');
}

describe('award runs survive a worker that dies', () => {
	// The stack has one worker, which takes award runs one at a time: this run may wait behind the runs
	// of other test files, hence the long waits (a deadline for liveness, not a speed target).
	it('runs again when the dead worker’s job comes back, and ends done', { timeout: 150_000 }, async () => {
		const { runId } = await aRunLeftRunning(1);
		// What pg-boss does once the job of a dead worker expires: it hands the job to a live worker.
		await boss.send('award-run', { runId });
		const run = await until(runId, (r) => r.status === 'done', 120);
		expect(run).toMatchObject({ status: 'done', attempts: 2 });
		expect((run.result as { totalCost: number }).totalCost).toBe(25);
	});

	// Issue 10 changed this behaviour: such a run used to wait 31 minutes and then fail with "the worker
	// stopped during the run and it was not retried"; now the workers' sweep finds its stale heartbeat
	// and starts it again within seconds, and fails it with the reason only after MAX_RESTARTS takeovers.
	it(
		'takes over a run whose worker died and whose job will not come back, within seconds',
		{ timeout: 150_000 },
		async () => {
			const { runId } = await aRunLeftRunning(120);
			const run = await until(runId, (r) => r.status === 'done', 120);
			expect(run).toMatchObject({ status: 'done', attempts: 2, restarts: 1 });
			expect((run.result as { totalCost: number }).totalCost).toBe(25);
			const restarted = await testDb()('trail_entries')
				.where({ action: 'award run restarted' })
				.whereRaw("detail->>'run' = ?", [runId]);
			expect(restarted).toHaveLength(1);
			expect(restarted[0].detail.reason).toBe('the worker stopped; restarting');
		}
	);

	it(
		'fails a run whose workers stopped MAX_RESTARTS times, with the reason',
		{ timeout: 150_000 },
		async () => {
			const { runId } = await aRunLeftRunning(120);
			await testDb()('award_runs').where({ id: runId }).update({ restarts: MAX_RESTARTS });
			const run = await until(runId, (r) => r.status === 'failed', 120);
			expect(run.error).toBe(
				`the worker stopped during the run ${MAX_RESTARTS + 1} times; it was not started again`
			);
			const trail = await testDb()('trail_entries')
				.where({ action: 'award run failed' })
				.whereRaw("detail->>'run' = ?", [runId]);
			expect(trail).toHaveLength(1);
		}
	);

	it('cancels a queued run at the buyer’s request, and refuses others', async () => {
		const { runId, buyer } = await aRunLeftRunning(0, 'queued');
		const client = await signedIn(buyer);
		const approver = await aSignedInUser('approver');
		const refused = await approver.client.request(`/api/runs/${runId}/cancel`, {
			method: 'POST',
			accept: 'application/json'
		});
		expect(refused.status).toBe(403);
		const response = await client.request(`/api/runs/${runId}/cancel`, {
			method: 'POST',
			accept: 'application/json'
		});
		expect(response.status).toBe(200);
		const run = await until(runId, (r) => r.status === 'cancelled', 10);
		expect(run.error).toBe('cancelled before it started');
	});
});
