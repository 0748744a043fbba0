// serve.js, the web server as several processes on one port (node:cluster), with real processes: the
// built app of the stack under test is started a second time on a free port with two web processes and
// no job workers (RUN_WORKERS=false, so it takes nothing from the stack's queues).
import { spawn, type ChildProcess } from 'node:child_process';
import { get } from 'node:http';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { freePort } from '../../docker-free-fakes/local-env';
import { descendants, isRunning, portIsFree, until } from '../support/stack';

const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
let server: ChildProcess | undefined;
let log = '';

afterAll(() => {
	if (server?.pid && isRunning(server.pid)) process.kill(-server.pid, 'SIGKILL');
});

/** GET /healthz on a new connection (none kept alive, so none stays tied to a process that died). */
function healthz(port: number): Promise<string> {
	return new Promise((resolve) => {
		const request = get(
			{ host: '127.0.0.1', port, path: '/healthz', agent: false, timeout: 3000 },
			(response) => {
				response.resume();
				response.on('end', () => resolve(String(response.statusCode)));
			}
		);
		request.on('timeout', () => request.destroy(new Error('no answer in 3 s')));
		request.on('error', (error: NodeJS.ErrnoException) => resolve(error.code ?? error.message));
	});
}

const healthy = async (port: number) => (await healthz(port)) === '200';

describe('serve.js: one port, several web processes', () => {
	it('keeps answering while a web process is killed, replaces it, and stops every process on SIGTERM', async () => {
		const port = await freePort();
		server = spawn(process.execPath, [join(root, 'serve.js')], {
			cwd: root,
			detached: true,
			stdio: ['ignore', 'pipe', 'pipe'],
			env: {
				...process.env,
				PORT: String(port),
				WEB_PROCESSES: '2',
				RUN_WORKERS: 'false',
				EXIT_WITH_PARENT: '0'
			}
		});
		server.stdout!.on('data', (chunk: Buffer) => (log += chunk));
		server.stderr!.on('data', (chunk: Buffer) => (log += chunk));
		const exited = new Promise<number | null>((resolve) => server!.once('exit', resolve));
		const primary = server.pid!;
		await until(() => healthy(port), 'the web server to answer', 60_000);
		await until(() => descendants(primary).length === 2, 'two web processes', 10_000);
		const [victim, survivor] = descendants(primary);
		// Forked is not yet listening (loading the app takes seconds on a busy machine): with the survivor
		// not listening yet, killing the victim would leave nobody to answer.
		const listening = (pid: number) => log.includes(`web process ${pid} listening`);
		await until(() => listening(victim!) && listening(survivor!), 'both web processes listening', 60_000);

		// Requests keep being answered by the other process while one is killed and replaced. Only a request
		// the killed process had already taken can fail (the poller sends one at a time).
		const failures: string[] = [];
		let answered = 0;
		let polling = true;
		const poller = (async () => {
			while (polling) {
				const status = await healthz(port);
				if (status === '200') answered++;
				else failures.push(status);
				await new Promise((r) => setTimeout(r, 20));
			}
		})();
		await new Promise((r) => setTimeout(r, 300));
		process.kill(victim!, 'SIGKILL');
		await until(
			() => descendants(primary).length === 2 && !descendants(primary).includes(victim!),
			'a new web process in place of the killed one',
			20_000
		);
		polling = false;
		await poller;
		const [replacement] = descendants(primary).filter((pid) => pid !== survivor);
		await until(() => listening(replacement!), 'the new web process listening', 60_000);
		expect(answered).toBeGreaterThan(0);
		expect(failures.length, `failed requests: ${failures.join(', ')}`).toBeLessThanOrEqual(1);
		// Then both processes answer: twenty requests in a row, each on a new connection.
		for (let k = 0; k < 20; k++) expect(await healthz(port)).toBe('200');
		expect(descendants(primary)).toContain(survivor);
		expect(log).toMatch(new RegExp(`web process ${victim} died \\(SIGKILL\\); starting another`));

		// SIGTERM to the primary only (as a service manager sends it): every web process drains and ends.
		const processes = [primary, ...descendants(primary)];
		process.kill(primary, 'SIGTERM');
		expect(await exited).toBe(0);
		await until(() => processes.every((pid) => !isRunning(pid)), 'every web process to end', 15_000);
		expect(await portIsFree(port)).toBe(true);
	});
});
