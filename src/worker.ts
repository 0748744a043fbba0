// A worker process: takes queued work from PostgreSQL (pg-boss) — award runs, the closing of events at
// their deadline, mail — and nothing else. Run any number of them, on any machine that reaches the same
// PostgreSQL, S3 store and SMTP relay: `npm run worker`. Stops cleanly on SIGINT and SIGTERM.
import { closeDb } from '$lib/server/db/knex';
import { stopJobs } from '$lib/server/jobs';
import { closeSolverPool } from '$lib/server/jobs/award-runs';
import { startWorkers } from '$lib/server/jobs/workers';
import { sweepUploadOrphans } from '$lib/server/services/upload-sweep';

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

let stopping = false;
function stop() {
	if (stopping) return;
	stopping = true;
	void stopJobs()
		.then(() => Promise.all([closeDb(), closeSolverPool()]))
		.finally(() => process.exit(0));
}
for (const signal of ['SIGINT', 'SIGTERM'] as const) process.on(signal, stop);
// Started by the project's supervisor: stdin is its lifeline, so the worker never outlives it.
if (process.env.EXIT_WITH_PARENT === '1') {
	process.stdin.on('close', stop);
	process.stdin.resume();
}
