// Real worker processes for the fault tests: started from the test with the stack's settings, taking
// their jobs from queues of their own (WORKER_QUEUE_PREFIX, src/lib/server/jobs/workers.ts) so the test
// can give one of them work and kill it with SIGKILL while the stack's own processes go on.
import { spawn, type ChildProcess } from 'node:child_process';
import { randomUUID } from 'node:crypto';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import PgBoss from 'pg-boss';
import { QUEUE_POLICIES, QUEUES } from '../../src/lib/server/jobs/queue';
import { databaseOwnerUrl, databaseUrl } from './env';

const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');

export interface TestWorker {
	process: ChildProcess;
	output: () => string;
	/** kill -9: no clean-up of any kind. */
	kill(): Promise<void>;
}

/** A queue prefix of this test's own; its queues are made (as the database's owner) and returned. */
export async function privateQueues(): Promise<string> {
	const prefix = `t${randomUUID().slice(0, 8)}-`;
	const owner = new PgBoss({
		connectionString: databaseOwnerUrl(),
		max: 2,
		supervise: false,
		schedule: false
	});
	await owner.start();
	try {
		for (const name of Object.values(QUEUES))
			await owner.createQueue(`${prefix}${name}`, { name: `${prefix}${name}`, ...QUEUE_POLICIES[name] });
	} finally {
		await owner.stop({ graceful: false, wait: true });
	}
	return prefix;
}

/** Sends jobs to a queue as the app would (the app's role), one right after the other. */
export async function sendTo(
	queue: string,
	data: object | object[],
	options: PgBoss.SendOptions = {}
): Promise<string[]> {
	const boss = new PgBoss({
		connectionString: databaseUrl(),
		max: 1,
		supervise: false,
		schedule: false,
		migrate: false
	});
	await boss.start();
	try {
		const ids: string[] = [];
		for (const one of Array.isArray(data) ? data : [data]) ids.push((await boss.send(queue, one, options))!);
		return ids;
	} finally {
		await boss.stop({ graceful: false, wait: true });
	}
}

/** `src/worker.ts` in a process of its own, taking jobs from the prefixed queues; resolves once it takes jobs. */
export async function startWorker(prefix: string): Promise<TestWorker> {
	const child = spawn(process.execPath, ['--import', 'tsx', join(root, 'src', 'worker.ts')], {
		cwd: root,
		env: { ...process.env, WORKER_QUEUE_PREFIX: prefix, EXIT_WITH_PARENT: '0' },
		stdio: ['ignore', 'pipe', 'pipe']
	});
	let output = '';
	child.stdout!.on('data', (chunk: Buffer) => (output += chunk.toString()));
	child.stderr!.on('data', (chunk: Buffer) => (output += chunk.toString()));
	const exited = new Promise<void>((resolve) => child.once('exit', () => resolve()));
	const began = Date.now();
	while (!output.includes('taking jobs')) {
		if (child.exitCode !== null) throw new Error(`the worker exited before taking jobs:\n${output}`);
		if (Date.now() - began > 60_000) {
			child.kill('SIGKILL');
			throw new Error(`the worker did not start in time:\n${output}`);
		}
		await new Promise((r) => setTimeout(r, 100));
	}
	return {
		process: child,
		output: () => output,
		async kill() {
			if (child.exitCode === null && child.signalCode === null) {
				child.kill('SIGKILL');
				await exited;
			}
		}
	};
}

export async function until<T>(
	what: string,
	read: () => Promise<T>,
	done: (value: T) => boolean,
	seconds: number
): Promise<T> {
	const deadline = Date.now() + seconds * 1000;
	let value = await read();
	while (!done(value)) {
		if (Date.now() > deadline)
			throw new Error(`${what}: not in ${seconds} s (last seen: ${JSON.stringify(value)})`);
		await new Promise((r) => setTimeout(r, 250));
		value = await read();
	}
	return value;
}
