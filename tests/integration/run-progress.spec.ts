// A long solve reports as it goes: the worker writes the engine's best award and bound while the run is
// running, and the run's API (which the run page follows every second) shows them. Real services: the
// worker process of the test stack takes the pg-boss job and solves with HiGHS.
import PgBoss from 'pg-boss';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { problemFor } from '../../src/lib/award/tools/bench';
import { aUser, closeTestDb, testDb } from '../support/factories';
import { aSupplierOrganisationWithUser, anOpenEvent, aStoredRun, signedIn } from '../support/events';
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

async function until(runId: string, done: (run: Record<string, unknown>) => boolean, seconds: number) {
	for (let k = 0; k < seconds * 4; k++) {
		const run = await testDb()('award_runs').where({ id: runId }).first();
		if (done(run)) return run;
		await new Promise((r) => setTimeout(r, 250));
	}
	throw new Error('the run did not change in time');
}

interface Progress {
	seconds: number;
	objective: number | null;
	bound: number | null;
	awardSeconds: number | null;
}

describe('a running award solve', () => {
	it('shows its best award so far and the bound, before it ends', { timeout: 150_000 }, async () => {
		const buyer = await aUser('buyer');
		const { organisation } = await aSupplierOrganisationWithUser();
		const event = await anOpenEvent({ createdBy: buyer.id, invite: [organisation.id] });
		// 2,000 items, 30 suppliers, at most 12 suppliers over the event: the method that relaxes the links
		// has an award within seconds, then spends the rest of the 60 s limit on a stronger bound.
		const problem = problemFor('2000x30', 'event');
		const run = await aStoredRun({ eventId: event.id, createdBy: buyer.id, problem });
		await boss.send('award-run', { runId: run.id });
		// The run's summary, as the run page polls it, shows the best award and the bound while it runs.
		const client = await signedIn(buyer);
		type Summary = {
			status: string;
			progress: {
				best: { totalCost: number | null; bound: number; gap: number; afterSeconds: number } | null;
			};
		};
		let live: Summary | null = null;
		for (let k = 0; k < 360 && !live; k++) {
			const response = await client.request(`/api/runs/${run.id}?summary=1`, { accept: 'application/json' });
			expect(response.status).toBe(200);
			const json = (await response.json()) as Summary;
			if (json.status === 'running' && json.progress.best?.totalCost != null) live = json;
			else if (json.status !== 'queued' && json.status !== 'running') break;
			else await new Promise((r) => setTimeout(r, 250));
		}
		expect(live, 'the summary showed an award while the run was running').not.toBeNull();
		const best = live!.progress.best!;
		expect(best.bound).toBeLessThanOrEqual(best.totalCost!);
		expect(best.gap).toBeCloseTo((best.totalCost! - best.bound) / best.totalCost!, 9);
		const first = (await testDb()('award_runs').where({ id: run.id }).first()).solve_progress as Progress;
		expect(first.objective).not.toBeNull();
		expect(first.bound!).toBeLessThanOrEqual(first.objective!);
		// "Found after": when the award shown was found, not when the worker last wrote.
		expect(best.afterSeconds).toBeLessThanOrEqual(first.seconds + 1e-6);
		if (best.totalCost === first.objective) expect(best.afterSeconds).toBeCloseTo(first.awardSeconds!, 6);
		// Later reports never show a dearer award; the bound stays below the award. On a busy machine the
		// 60 s limit can end the run first: then its result is no dearer than the award shown.
		const later = await until(
			run.id,
			(r) => {
				const p = r.solve_progress as Progress | null;
				return r.status !== 'running' || (p !== null && p.seconds > first.awardSeconds! + 1);
			},
			60
		);
		if (later.status === 'running') {
			const stored = later.solve_progress as Progress;
			expect(stored.objective!).toBeLessThanOrEqual(first.objective!);
			expect(stored.bound!).toBeLessThanOrEqual(stored.objective!);
		} else {
			expect(later.status).toBe('done');
			expect((later.result as { totalCost: number }).totalCost).toBeLessThanOrEqual(first.objective! + 1e-6);
		}
		// Done with it: the buyer's cancel ends the solve within a second or two.
		await testDb()('award_runs').where({ id: run.id }).update({ cancel_requested: true });
		const ended = await until(run.id, (r) => r.status !== 'running', 30);
		expect(['cancelled', 'done']).toContain(ended.status);
	});
});
