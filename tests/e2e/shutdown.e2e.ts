// Stopping the whole stack, with real processes: a second `npm start` (on free ports and a throwaway
// folder, reusing the build of the stack under test) is started, then stopped as a person would (Ctrl-C:
// SIGINT to the terminal's whole process group) and as a service manager might (SIGTERM to the npm process
// only: npm 11 passes it to the script's shell, which dies and leaves what it started without a signal).
// Either way: npm exits, no process of the stack is left, no port is bound, and the logs hold no error or
// stack trace (before: with Ctrl-C PostgreSQL stopped at the same moment as the web server, which often
// crashed on an unhandled pool error; with SIGTERM to npm everything kept running).
import { spawn } from 'node:child_process';
import { chmodSync, mkdtempSync, readdirSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { freePort } from '../../docker-free-fakes/local-env';
import {
	descendants,
	isRunning,
	portIsFree,
	processesMentioning,
	readStackPids,
	until
} from '../support/stack';

const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const folders: string[] = [];
afterAll(() => {
	for (const folder of folders) rmSync(folder, { recursive: true, force: true });
});

/** Settings of the stack under test that the second stack must not inherit. */
const INHERITED = [
	'DATABASE_URL',
	'DATABASE_OWNER_URL',
	'DATABASE_ADMIN_URL',
	'MIGRATION_DATABASE_URL',
	'STACK_CONTROL_DIR',
	'PG_DATA_DIR',
	'CLOCK_OFFSET_FILE',
	'ORIGIN',
	'APP_URL'
];

async function startSecondStack() {
	const dataDir = mkdtempSync(join(tmpdir(), 'tenderloom-shutdown-'));
	chmodSync(dataDir, 0o755);
	folders.push(dataDir);
	const ports = {
		PORT: await freePort(),
		PG_PORT: await freePort(),
		S3_FAKE_PORT: await freePort(),
		SMTP_FAKE_PORT: await freePort(),
		MAIL_FAKE_HTTP_PORT: await freePort()
	};
	const env: NodeJS.ProcessEnv = { ...process.env };
	for (const name of INHERITED) delete env[name];
	Object.assign(env, {
		...Object.fromEntries(Object.entries(ports).map(([k, v]) => [k, String(v)])),
		TENDERLOOM_DATA_DIR: dataDir,
		// The stack under test built the app already; a second build would take a minute.
		TENDERLOOM_SKIP_BUILD: '1'
	});
	// A process group of its own, as a terminal gives the command it runs.
	const npm = spawn('npm', ['start'], { cwd: root, env, detached: true, stdio: ['ignore', 'pipe', 'pipe'] });
	let output = '';
	npm.stdout.on('data', (chunk: Buffer) => (output += chunk.toString()));
	npm.stderr.on('data', (chunk: Buffer) => (output += chunk.toString()));
	const exited = new Promise<number | null>((resolve) => npm.once('exit', (code) => resolve(code)));
	const origin = `http://127.0.0.1:${ports.PORT}`;
	await until(
		async () =>
			output.includes('Tenderloom is running') &&
			(await fetch(`${origin}/healthz`)
				.then((r) => r.ok)
				.catch(() => false)),
		`the second stack (output so far:\n${output.slice(-2000)})`,
		150_000
	);
	const recorded = readStackPids(join(dataDir, 'run'));
	// Everything below npm now: its shell, the bootstrap, the stack runner, the services and their children
	// (PostgreSQL's backends): all must be gone after the stop.
	const pids = [npm.pid!, ...descendants(npm.pid!)];
	for (const pid of [recorded.supervisor, ...Object.values(recorded.services)])
		expect(pids, 'the recorded pids are processes under npm').toContain(pid);
	return {
		npm,
		pids,
		ports: Object.values(ports),
		dataDir,
		output: () => output,
		exited,
		logs: () =>
			readdirSync(join(dataDir, 'logs'))
				.map((file) => `── ${file}\n${readFileSync(join(dataDir, 'logs', file), 'utf8')}`)
				.join('\n')
	};
}

async function expectAllGone(stack: Awaited<ReturnType<typeof startSecondStack>>) {
	await stack.exited;
	await until(
		() => stack.pids.every((pid) => !isRunning(pid)),
		`every process of the stack to end (left: ${stack.pids.filter(isRunning).join(', ')})`,
		45_000
	);
	expect(stack.pids.filter(isRunning), 'processes left').toEqual([]);
	expect(
		processesMentioning([stack.dataDir, ...stack.ports.map((p) => `-p ${p}`)]),
		'ps shows nothing of the stack'
	).toEqual([]);
	for (const port of stack.ports) expect(await portIsFree(port), `port ${port} is free`).toBe(true);
	// PostgreSQL refuses the supervisor's readiness probes while it starts: that FATAL is expected.
	const everything = `${stack.output()}\n${stack.logs()}`
		.split('\n')
		.filter((line) => !line.includes('FATAL:  the database system is starting up'))
		.join('\n');
	expect(everything, 'the stack said it stopped').toContain('stopped postgresql');
	// No crash: no error, unhandled rejection or stack trace in the output or any service's log.
	expect(everything).not.toMatch(/error|unhandled|^\s+at /im);
	expect(everything).not.toMatch(/FATAL|PANIC/);
}

describe('stopping the stack', () => {
	it('Ctrl-C (SIGINT to the process group), then SIGTERM to the npm process only: nothing left, no port bound, no crash', async () => {
		const first = await startSecondStack();
		process.kill(-first.npm.pid!, 'SIGINT');
		await expectAllGone(first);
		// The order: web and worker stop before the fakes, and PostgreSQL last.
		const order = [...first.output().matchAll(/stopped (\S+) \(/g)].map((m) => m[1]);
		expect(order).toEqual(['worker', 'web', 'smtp-fake', 's3-fake', 'postgresql']);

		const second = await startSecondStack();
		process.kill(second.npm.pid!, 'SIGTERM');
		await expectAllGone(second);
	}, 420_000);
});
