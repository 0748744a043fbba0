// The award-run job, in a worker process: solve the stored problem in the solver pool, store the result
// with its hash, and record both in the decision trail. Cancellation is a flag on the run, read every
// second; a run found running when its job is retried (the worker died) simply starts again.
import { readFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import { solveAward, type Solver } from '$lib/award/core/engine';
import { SolveCancelled, SolverPool } from '$lib/award/runtime/pool';
import { parseProblem } from '$lib/award/core/problem';
import { now } from '../clock';
import { db } from '../db/knex';
import { RUN_OPTIONS, type RunRow } from '../services/awards';
import { appendTrail, canonicalJson, sha256 } from '../trail';

let pool: SolverPool | undefined;

/** pg-boss hands a job whose worker died to another worker after this long. */
export const RUN_JOB_EXPIRY_SECONDS = 1800;

export const solverVersion = (() => {
	try {
		const wasm = createRequire(import.meta.url).resolve('highs/runtime');
		const { version } = JSON.parse(readFileSync(join(dirname(wasm), '..', 'package.json'), 'utf8')) as {
			version: string;
		};
		return `HiGHS (npm highs ${version})`;
	} catch {
		return 'HiGHS (npm highs)';
	}
})();

export async function closeSolverPool(): Promise<void> {
	await pool?.close();
	pool = undefined;
}

async function finish(
	run: RunRow,
	status: RunRow['status'],
	fields: Record<string, unknown>,
	trail: Record<string, unknown>
) {
	const at = now();
	await db().transaction(async (trx) => {
		await trx('award_runs')
			.where({ id: run.id })
			.update({ status, finished_at: at, ...fields });
		await appendTrail(trx, {
			eventId: run.event_id,
			actor: 'system',
			action: `award run ${status === 'done' ? 'finished' : status}`,
			detail: { run: run.id, number: run.number, ...trail },
			at
		});
	});
}

export async function runAward(runId: string): Promise<void> {
	const run = await db()<RunRow>('award_runs').where({ id: runId }).first();
	if (!run || ['done', 'failed', 'cancelled'].includes(run.status)) return;
	if (run.cancel_requested) return finish(run, 'cancelled', { error: 'cancelled before it started' }, {});
	await db()('award_runs')
		.where({ id: runId })
		.update({ status: 'running', started_at: now(), attempts: run.attempts + 1 });
	const controller = new AbortController();
	const watch = setInterval(() => {
		void db()('award_runs')
			.where({ id: runId })
			.first('cancel_requested')
			.then((r: { cancel_requested?: boolean } | undefined) => r?.cancel_requested && controller.abort())
			.catch(() => undefined);
	}, 1000);
	try {
		const parsed = parseProblem(run.problem);
		if (!parsed.ok)
			return await finish(
				run,
				'failed',
				{ error: parsed.problems.join('; ') },
				{ reason: 'invalid problem' }
			);
		pool ??= new SolverPool();
		const active = pool;
		const solver: Solver = { solve: (model, options) => active.solve(model, options, controller.signal) };
		const result = await solveAward(parsed.problem, solver, RUN_OPTIONS);
		// The hash covers what the problem determines, not how long the solve took.
		const { solveSeconds: _seconds, ...stable } = result;
		void _seconds;
		const resultHash = sha256(canonicalJson(stable));
		await finish(
			run,
			'done',
			{
				result: JSON.stringify(result),
				result_sha256: resultHash,
				solver_version: solverVersion,
				error: null
			},
			{
				status: result.status,
				totalCost: result.totalCost,
				problemSha256: run.problem_sha256.trim(),
				resultSha256: resultHash,
				solverVersion,
				options: RUN_OPTIONS
			}
		);
	} catch (error) {
		if (error instanceof SolveCancelled || controller.signal.aborted)
			return finish(run, 'cancelled', { error: 'cancelled by the buyer' }, {});
		await finish(run, 'failed', { error: (error as Error).message }, { reason: (error as Error).message });
	} finally {
		clearInterval(watch);
	}
}

/** Runs left "running" by a worker that stopped and whose job will not come back: failed, with a reason. */
export async function failAbandonedRuns(olderThanSeconds = RUN_JOB_EXPIRY_SECONDS + 60): Promise<number> {
	const abandoned = await db()<RunRow>('award_runs')
		.where({ status: 'running' })
		.where('started_at', '<', new Date(Date.now() - olderThanSeconds * 1000));
	for (const run of abandoned)
		await finish(
			run,
			'failed',
			{ error: 'the worker stopped during the run and it was not retried' },
			{ reason: 'abandoned' }
		);
	return abandoned.length;
}
