// The web server: one process per core, all answering on the one PORT through node:cluster (the primary
// accepts connections and hands them to the processes in turn). Each process is adapter-node's own
// build/index.js, with its settings, graceful shutdown and hooks unchanged; they keep no state between
// requests (README.md, "Scaling out"), so any of them may answer any request.
//
// WEB_PROCESSES sets the count (default: the cores Node may use). A process that dies unexpectedly is
// replaced; more than MAX_DEATHS deaths within DEATH_WINDOW_MS stop the whole server with exit code 1, for
// the supervisor above (docker-free-fakes/supervisor.ts, systemd, a container runtime) to restart with its
// back-off. SIGINT and SIGTERM reach every process (they drain their requests and stop); the primary ends
// when the last one has.
import cluster from 'node:cluster';
import { availableParallelism } from 'node:os';

const MAX_DEATHS = 5;
const DEATH_WINDOW_MS = 60_000;

/** @param {string} message @param {'info' | 'error'} [level] */
const log = (message, level = 'info') =>
	console[level === 'error' ? 'error' : 'log'](JSON.stringify({ level, source: 'web-primary', message }));

if (cluster.isPrimary) {
	const wanted = Number(process.env.WEB_PROCESSES ?? availableParallelism());
	const count = Number.isInteger(wanted) && wanted > 0 ? wanted : availableParallelism();
	/** @type {number[]} */
	let deaths = [];
	let stopping = false;

	const running = () => Object.keys(cluster.workers ?? {}).length;
	/** @param {NodeJS.Signals} signal */
	const stop = (signal) => {
		if (stopping) return;
		stopping = true;
		// A signal sent to the process group has reached the web processes already; a second is ignored.
		for (const worker of Object.values(cluster.workers ?? {})) worker?.process.kill(signal);
		if (running() === 0) process.exit();
	};

	cluster.on('exit', (worker, code, signal) => {
		if (stopping || code === 0) {
			// A web process ends with 0 only when it was asked to stop (its lifeline closed, or a signal).
			if (running() === 0) process.exit();
			return;
		}
		const now = Date.now();
		deaths = [...deaths.filter((at) => now - at < DEATH_WINDOW_MS), now];
		if (deaths.length > MAX_DEATHS) {
			log(`${deaths.length} web processes died within ${DEATH_WINDOW_MS / 1000} s; stopping`, 'error');
			stop('SIGTERM');
			process.exitCode = 1;
			return;
		}
		log(
			`web process ${worker.process.pid} died (${signal ?? `exit code ${code}`}); starting another`,
			'error'
		);
		cluster.fork();
	});

	// Until a process listens it takes no connections; with none listening the port refuses them.
	cluster.on('listening', (worker) => log(`web process ${worker.process.pid} listening`));

	for (const signal of /** @type {const} */ (['SIGINT', 'SIGTERM'])) process.on(signal, () => stop(signal));
	// Started by the project's supervisor: stdin is its lifeline (the web processes watch it too).
	if (process.env.EXIT_WITH_PARENT === '1') {
		process.stdin.on('close', () => stop('SIGTERM'));
		process.stdin.resume();
	}
	for (let i = 0; i < count; i++) cluster.fork();
	log(`${count} web processes`);
} else {
	await import('./build/index.js');
}
