// A worker process: takes queued work from PostgreSQL (pg-boss) — award runs, the closing of events at
// their deadline, mail — and nothing else. Run any number of them, on any machine that reaches the same
// PostgreSQL, S3 store and SMTP relay: `npm run worker`. Stops cleanly on SIGINT and SIGTERM: it takes no
// new jobs, gives the running ones a few seconds to end (pg-boss hands back those that do not), closes
// its pools and exits. A database outage is logged and waited out, never the end of the process.
import { closeDb, isDatabaseUnavailable } from '$lib/server/db/knex';
import { stopJobs } from '$lib/server/jobs';
import { closeSolverPool } from '$lib/server/services/run-execution';
import { startWorkers } from '$lib/server/jobs/workers';
import { sweepUploadOrphans } from '$lib/server/services/upload-sweep';

const log = (level: 'info' | 'warn' | 'error', message: string, more: Record<string, unknown> = {}) =>
	console[level](JSON.stringify({ level, source: 'worker', message, pid: process.pid, ...more }));

// A promise nobody waits for that fails (pg-boss's own bookkeeping while the database restarts, say) is
// logged; by default Node would end the worker and every job it holds.
process.on('unhandledRejection', (reason) =>
	log(isDatabaseUnavailable(reason) ? 'warn' : 'error', `unhandled rejection: ${String(reason)}`, {
		databaseUnavailable: isDatabaseUnavailable(reason)
	})
);

/** Past this, the worker exits even if something did not close; the supervisor would kill it anyway. */
const STOP_LIMIT_MS = 10_000;

let stopping = false;
function stop(why: string) {
	if (stopping) return;
	stopping = true;
	log('info', 'stopping', { reason: why });
	setTimeout(() => {
		log('warn', `still stopping after ${STOP_LIMIT_MS / 1000} s; exiting`);
		process.exit(0);
	}, STOP_LIMIT_MS).unref();
	void stopJobs()
		.catch((cause: unknown) => log('warn', `stopping the job queue: ${(cause as Error).message}`))
		.then(() => Promise.all([closeDb(), closeSolverPool()]))
		.catch((cause: unknown) => log('warn', `closing the pools: ${(cause as Error).message}`))
		.finally(() => {
			log('info', 'stopped');
			process.exit(0);
		});
}
for (const signal of ['SIGINT', 'SIGTERM'] as const) process.on(signal, () => stop(signal));
// Started by the project's supervisor: stdin is its lifeline, so the worker never outlives it.
if (process.env.EXIT_WITH_PARENT === '1') {
	process.stdin.on('close', () => stop('the supervisor is gone'));
	process.stdin.resume();
}

await startWorkers({ awardRuns: true });
// Files and rows a dead upload request left behind (services/upload-sweep.ts), every minute.
setInterval(
	() =>
		void sweepUploadOrphans().catch((error: Error) =>
			console.error(JSON.stringify({ level: 'error', source: 'upload-sweep', message: error.message }))
		),
	60_000
).unref();
console.log(JSON.stringify({ level: 'info', source: 'worker', message: 'taking jobs', pid: process.pid }));
