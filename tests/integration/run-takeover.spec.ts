// Fault test with real processes: the worker solving a run is killed with SIGKILL mid-solve; another
// worker (the stack's own) must take the run over and finish it within 60 s, once.
import { afterAll, describe, expect, it } from 'vitest';
import { benchmarkRules, generateProblem } from '../../src/lib/award/tools/generate';
import { canonicalJson, sha256 } from '../../src/lib/server/trail';
import { aSupplierOrganisationWithUser, anOpenEvent, aStoredRun } from '../support/events';
import { aUser, closeTestDb, testDb } from '../support/factories';
import { privateQueues, sendTo, startWorker, until, type TestWorker } from '../support/workers';

const started: TestWorker[] = [];
afterAll(async () => {
	for (const worker of started) await worker.kill();
	await closeTestDb();
});

// A solve of several seconds (about 5 s on one core of the project's machines): 300 items, 20 suppliers,
// a minimum-award rule, so the model has integer choices.
const problem = generateProblem({
	items: 300,
	suppliers: 20,
	seed: 7,
	capacity: true,
	rules: benchmarkRules.filter((r) => r.type === 'min_award')
});

async function aQueuedRun() {
	const buyer = await aUser('buyer');
	const { organisation } = await aSupplierOrganisationWithUser();
	const event = await anOpenEvent({ createdBy: buyer.id, invite: [organisation.id] });
	const run = await aStoredRun({
		eventId: event.id,
		createdBy: buyer.id,
		problem
	});
	return run.id as string;
}

const readRun = (runId: string) => testDb()('award_runs').where({ id: runId }).first();
const trailOf = (runId: string, action: string) =>
	testDb()('trail_entries').where({ action }).whereRaw("detail->>'run' = ?", [runId]);

describe('a worker killed during a solve', () => {
	it('has its run taken over and finished by another worker within 60 s, result written once', async () => {
		const prefix = await privateQueues();
		const doomed = await startWorker(prefix);
		started.push(doomed);
		const runId = await aQueuedRun();
		await sendTo(`${prefix}award-run`, { runId });
		// The doomed worker has claimed the run and is solving it.
		const claimed = await until(
			'the spawned worker claims the run',
			() => readRun(runId),
			(r) => r.status === 'running',
			60
		);
		await new Promise((r) => setTimeout(r, 1500));
		expect((await readRun(runId)).status).toBe('running');
		await doomed.kill();
		const killedAt = Date.now();

		const run = await until(
			'the run ends after its worker was killed',
			() => readRun(runId),
			(r) => !['queued', 'running'].includes(r.status),
			60
		);
		expect(Date.now() - killedAt).toBeLessThan(60_000);
		expect(run.status).toBe('done');
		expect(run.owner).not.toBe(claimed.owner);
		expect(run.attempts).toBe(2);
		expect(run.restarts).toBe(1);
		expect(run.result.status).toBe('optimal');
		// The hash covers the allocation only (no explanation inside the result).
		const { solveSeconds: _s, ...stable } = run.result;
		expect(run.result_sha256.trim()).toBe(sha256(canonicalJson(stable)));
		expect(run.result.ruleCosts).toBeUndefined();
		expect(await trailOf(runId, 'award run restarted')).toHaveLength(1);
		const finished = await trailOf(runId, 'award run finished');
		expect(finished).toHaveLength(1);
		expect(finished[0].detail.resultSha256).toBe(run.result_sha256.trim());
	}, 150_000);
});
