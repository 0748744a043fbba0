// Wires the queues to their handlers in this process: closing events at their deadline, mail, sign-in
// links and notices everywhere; award runs and their explanations only where asked (worker processes),
// so a web process never solves. Worker processes also sweep for runs whose worker stopped.
import { sweepStaleRuns, SWEEP_SECONDS } from '../services/run-execution';
import { handleAwardRun } from './handlers/award-run';
import { handleCloseEvent, type CloseEventJob } from './handlers/close-event';
import { eachJob } from './handlers/each-job';
import { handleExplainRun } from './handlers/explain-run';
import { handleMail, type QueuedMail } from './handlers/mail';
import { handleNotice } from './handlers/notice';
import { handleSignInLink } from './handlers/sign-in-link';
import { jobs, QUEUES } from './queue';
import type { SignInLinkJob } from '../auth/sign-in-links';
import type { NoticeJob } from '../services/notice-sending';
import type { RunJob } from '../services/run-execution';

let sweeping: ReturnType<typeof setInterval> | undefined;

/**
 * Starts taking jobs. WORKER_QUEUE_PREFIX (tests only) makes this process take its jobs from queues of
 * that prefix instead (made by the test as the database owner), so a test can hand work to one process
 * it started and kill it, while the stack's own processes go on with everything else.
 */
export async function startWorkers(options: { awardRuns?: boolean } = {}): Promise<void> {
	const queue = await jobs();
	const prefix = process.env.WORKER_QUEUE_PREFIX ?? '';
	const name = (q: string) => `${prefix}${q}`;
	await queue.work<NoticeJob>(name(QUEUES.notice), handleNotice);
	if (options.awardRuns) {
		await queue.work<RunJob>(name(QUEUES.awardRun), handleAwardRun);
		// The run page waits for these: polled often.
		await queue.work<RunJob>(name(QUEUES.explainRun), { pollingIntervalSeconds: 0.5 }, handleExplainRun);
		const sweep = () =>
			void sweepStaleRuns().catch((error: Error) =>
				console.error(JSON.stringify({ level: 'error', source: 'run sweep', message: error.message }))
			);
		sweep();
		sweeping ??= setInterval(sweep, SWEEP_SECONDS * 1000);
		sweeping.unref();
	}
	// People wait for these: polled often, taken a few at a time, each job settled on its own.
	await queue.work<SignInLinkJob>(
		name(QUEUES.signInLink),
		{ batchSize: 5, pollingIntervalSeconds: 0.5 },
		eachJob(name(QUEUES.signInLink), handleSignInLink)
	);
	await queue.work<CloseEventJob>(name(QUEUES.closeEvent), handleCloseEvent);
	await queue.work<QueuedMail>(name(QUEUES.mail), { batchSize: 5 }, eachJob(name(QUEUES.mail), handleMail));
}

/** Stops the sweep (the queues stop with stopJobs). */
export function stopSweeping(): void {
	if (sweeping) clearInterval(sweeping);
	sweeping = undefined;
}
