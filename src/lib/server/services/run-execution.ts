// Award runs in a worker process. A run has one owner at a time: a worker claims it with a fresh token
// (a conditional update: queued, or running with a stale heartbeat), beats its heartbeat every few seconds
// while it solves, and writes the result only while it still holds the claim, so a stopped worker's late
// writes are refused and the result is written once. Every worker sweeps for runs whose heartbeat went
// stale (their worker died): such a run is queued again with its job, in one transaction, and failed with
// the reason after MAX_RESTARTS takeovers. The allocation is stored as soon as the solve ends; rule costs,
// conflicts and sensitivity are worked out after it by their own job (explain-run), under the same rules.
import { randomUUID } from 'node:crypto';
import { solveAward, type AwardResult, type Progress, type Solver } from '$lib/award/core/engine';
import { explainAward } from '$lib/award/core/explain';
import { SolveCancelled, SolverPool } from '$lib/award/runtime/pool';
import { solverVersion } from '$lib/award/runtime/solver-version';
import { parseProblem } from '$lib/award/core/problem';
import { now } from '../clock';
import {
	beatRun,
	claimExplanation,
	claimRun,
	failStaleExplanation,
	failStaleRun,
	finishOwnedExplanation,
	finishOwnedRun,
	isCancelRequested,
	lockStaleWork,
	recordSolveProgress,
	requeueExplanation,
	requeueRun
} from '../db/awards';
import { db, type Db } from '../db/knex';
import type { RunRow } from '../db/tables';
import { QUEUES, sendJob } from '../jobs/queue';
import { appendTrail, canonicalJson, sha256 } from '../trail';
import { RUN_OPTIONS } from './award-runs';

/** The owner beats the heartbeat this often… */
export const HEARTBEAT_SECONDS = 5;
/** …and a heartbeat older than this means its worker stopped: another worker takes the run over. */
export const STALE_SECONDS = 20;
/** Every worker looks for stale runs this often. */
export const SWEEP_SECONDS = 5;
/** A run whose workers stopped this many times is failed rather than started again. */
export const MAX_RESTARTS = 3;

export interface RunJob {
	runId: string;
}

let pool: SolverPool | undefined;

export async function closeSolverPool(): Promise<void> {
	await pool?.close();
	pool = undefined;
}

function poolSolver(signal: AbortSignal): Solver {
	pool ??= new SolverPool();
	const active = pool;
	return { solve: (model, options) => active.solve(model, options, signal) };
}

/** The explanation of a stored allocation: rule costs and sensitivity, or the conflicts when nothing fits. */
export type Explanation = Pick<AwardResult, 'ruleCosts' | 'conflicts' | 'sensitivity'>;

/**
 * Works out the explanation of a run's result. For now by solving again with explanations on (the solve
 * is deterministic, so the allocation is the stored one); to be replaced by the engine's explainAward.
 */
/** Whether a result has anything to explain: rule costs and sensitivity of an allocation, or conflicts. */
const explainable = (result: AwardResult) => ['optimal', 'feasible', 'infeasible'].includes(result.status);

/**
 * Beats the owner's heartbeat and watches the cancel flag while `work` runs; aborts the work when the
 * buyer cancels or when the claim is lost (another worker took the run over).
 */
async function owned<T>(
	runId: string,
	owner: string,
	phase: 'solve' | 'explain',
	work: (signal: AbortSignal, lost: () => boolean) => Promise<T>
): Promise<T> {
	const controller = new AbortController();
	let lost = false;
	let ticks = 0;
	const watch = setInterval(() => {
		ticks += 1;
		const beat = ticks % HEARTBEAT_SECONDS === 0;
		const check = beat
			? beatRun(db(), runId, owner, phase).then((row) => {
					if (!row) lost = true;
					return Boolean(row?.cancel_requested);
				})
			: phase === 'solve'
				? isCancelRequested(db(), runId)
				: Promise.resolve(false);
		// A failed beat (a database blip) is only a missed beat: the run is taken over if they go on failing.
		void check
			.then((cancel) => {
				if (lost || (phase === 'solve' && cancel)) controller.abort();
			})
			.catch(() => undefined);
	}, 1000);
	try {
		return await work(controller.signal, () => lost);
	} finally {
		clearInterval(watch);
	}
}

async function finishRun(
	run: RunRow,
	owner: string,
	status: 'done' | 'failed' | 'cancelled',
	fields: Record<string, unknown>,
	trail: Record<string, unknown>,
	explanation: RunRow['explanation_status'] = 'not_needed'
): Promise<boolean> {
	const at = now();
	return db().transaction(async (trx) => {
		const finished = await finishOwnedRun(trx, run.id, owner, {
			status,
			finished_at: at,
			explanation_status: explanation,
			...fields
		});
		// Another worker holds the run now: this worker's result is not written.
		if (!finished) return false;
		await appendTrail(trx, {
			eventId: run.event_id,
			actor: 'system',
			action: `award run ${status === 'done' ? 'finished' : status}`,
			detail: { run: run.id, number: run.number, ...trail },
			at
		});
		if (explanation === 'pending') await sendJob(trx, QUEUES.explainRun, { runId: run.id } satisfies RunJob);
		return true;
	});
}

/** The award-run job: solves the stored problem, stores the allocation with its hash, queues the explanation. */
export async function executeRun(runId: string): Promise<void> {
	const owner = randomUUID();
	const run = await claimRun(db(), runId, owner, STALE_SECONDS);
	// Ended, or held by a live worker: nothing to do.
	if (!run) return;
	if (run.cancel_requested)
		return void (await finishRun(run, owner, 'cancelled', { error: 'cancelled before it started' }, {}));
	await owned(run.id, owner, 'solve', async (signal, lost) => {
		try {
			const parsed = parseProblem(run.problem);
			if (!parsed.ok)
				return void (await finishRun(
					run,
					owner,
					'failed',
					{ error: parsed.problems.join('; ') },
					{ reason: 'invalid problem' }
				));
			// The engine reports its best award and bound as they improve (at each new award, and a running
			// MIP at most once a second otherwise): each is written in order, for the run page, while the
			// run is still this worker's.
			// With each, when the award it reports was found: a stronger bound for the same award comes later.
			let writes = Promise.resolve();
			let award: { objective: number; seconds: number } | null = null;
			const onProgress = (progress: Progress) => {
				if (progress.objective !== null && (award === null || progress.objective < award.objective))
					award = { objective: progress.objective, seconds: progress.seconds };
				const stored = { ...progress, awardSeconds: award?.seconds ?? null };
				writes = writes.then(() => recordSolveProgress(db(), run.id, owner, stored)).catch(() => undefined);
			};
			const result = await solveAward(parsed.problem, poolSolver(signal), {
				...RUN_OPTIONS,
				explain: false,
				onProgress
			});
			await writes;
			if (lost()) return;
			// The hash covers the allocation the problem determines: not how long the solve took, and not the
			// explanation, which comes later with its own hash.
			const { solveSeconds: _seconds, ...stable } = result;
			const resultHash = sha256(canonicalJson(stable));
			await finishRun(
				run,
				owner,
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
				},
				explainable(result) ? 'pending' : 'not_needed'
			);
		} catch (error) {
			if (lost()) return;
			if (error instanceof SolveCancelled || signal.aborted)
				return void (await finishRun(run, owner, 'cancelled', { error: 'cancelled by the buyer' }, {}));
			await finishRun(
				run,
				owner,
				'failed',
				{ error: (error as Error).message },
				{ reason: (error as Error).message }
			);
		}
	});
}

/** The explain-run job: rule costs, conflicts and sensitivity of a finished run, stored beside its result. */
export async function explainRun(runId: string): Promise<void> {
	const owner = randomUUID();
	const run = await claimExplanation(db(), runId, owner, STALE_SECONDS);
	if (!run || !run.result) return;
	await owned(run.id, owner, 'explain', async (signal, lost) => {
		let fields: Parameters<typeof finishOwnedExplanation>[3];
		let detail: Record<string, unknown>;
		try {
			const explanation = await explainAward(run.problem, run.result!, poolSolver(signal), RUN_OPTIONS);
			if (lost()) return;
			const hash = sha256(canonicalJson(explanation));
			fields = {
				explanation_status: 'done',
				explanation: JSON.stringify(explanation),
				explanation_sha256: hash,
				explanation_error: null
			};
			detail = { resultSha256: run.result_sha256?.trim() ?? null, explanationSha256: hash };
		} catch (error) {
			if (lost()) return;
			fields = { explanation_status: 'failed', explanation_error: (error as Error).message };
			detail = { reason: (error as Error).message };
		}
		const at = now();
		await db().transaction(async (trx) => {
			if (!(await finishOwnedExplanation(trx, run.id, owner, fields))) return;
			await appendTrail(trx, {
				eventId: run.event_id,
				actor: 'system',
				action: fields.explanation_status === 'done' ? 'award run explained' : 'award run explanation failed',
				detail: { run: run.id, number: run.number, ...detail },
				at
			});
		});
	});
}

const stoppedReason = (restarts: number) =>
	`the worker stopped during the run ${restarts} times; it was not started again`;

/**
 * Takes over runs and explanations whose worker stopped (a heartbeat older than STALE_SECONDS): each is
 * queued again with its job in one transaction (so it is never left queued without one), or failed with
 * the reason after MAX_RESTARTS. Returns how many it took over or failed.
 */
export async function sweepStaleRuns(): Promise<number> {
	return db().transaction(async (trx: Db) => {
		const stale = await lockStaleWork(trx, STALE_SECONDS);
		const at = now();
		for (const run of stale) {
			const giveUp = run.restarts >= MAX_RESTARTS;
			const base = { run: run.id, number: run.number };
			if (run.phase === 'solve' && giveUp) {
				await failStaleRun(trx, run.id, stoppedReason(run.restarts + 1), at);
				await appendTrail(trx, {
					eventId: run.event_id,
					actor: 'system',
					action: 'award run failed',
					detail: { ...base, reason: stoppedReason(run.restarts + 1) },
					at
				});
			} else if (run.phase === 'solve') {
				await requeueRun(trx, run.id);
				await sendJob(trx, QUEUES.awardRun, { runId: run.id } satisfies RunJob, {
					retryLimit: 2,
					retryDelay: 2
				});
				await appendTrail(trx, {
					eventId: run.event_id,
					actor: 'system',
					action: 'award run restarted',
					detail: { ...base, reason: 'the worker stopped; restarting', restart: run.restarts + 1 },
					at
				});
			} else if (giveUp) {
				await failStaleExplanation(trx, run.id, stoppedReason(run.restarts + 1));
				await appendTrail(trx, {
					eventId: run.event_id,
					actor: 'system',
					action: 'award run explanation failed',
					detail: { ...base, reason: stoppedReason(run.restarts + 1) },
					at
				});
			} else {
				await requeueExplanation(trx, run.id);
				await sendJob(trx, QUEUES.explainRun, { runId: run.id } satisfies RunJob);
			}
		}
		return stale.length;
	});
}
