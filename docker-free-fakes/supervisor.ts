// A small process supervisor: starts each local service as a child process, waits until it answers,
// restarts it when it dies unexpectedly (with back-off, for as long as the stack runs), and stops every
// child on shutdown, in the reverse order of their start.
import { spawn, type ChildProcess } from 'node:child_process';
import {
	createWriteStream,
	existsSync,
	mkdirSync,
	renameSync,
	writeFileSync,
	type WriteStream
} from 'node:fs';
import { connect } from 'node:net';
import { dirname, join } from 'node:path';

/**
 * How fast a crashed service comes back: quickly (doubling from `firstDelayMs` up to `fastDelayMaxMs`)
 * while it has restarted fewer than `fastRestarts` times within the last `windowMs`, then every
 * `slowDelayMs`; never giving up, since a local stack with a service missing is down.
 */
export interface RestartPolicy {
	windowMs: number;
	fastRestarts: number;
	firstDelayMs: number;
	fastDelayMaxMs: number;
	slowDelayMs: number;
}

export const DEFAULT_RESTART_POLICY: RestartPolicy = {
	windowMs: 60_000,
	fastRestarts: 5,
	firstDelayMs: 500,
	fastDelayMaxMs: 8_000,
	slowDelayMs: 30_000
};

/** The wait before the next restart, given the times of the earlier restarts (pruned to the window). */
export function restartDelay(policy: RestartPolicy, recentRestarts: number): number {
	if (recentRestarts >= policy.fastRestarts) return policy.slowDelayMs;
	return Math.min(policy.firstDelayMs * 2 ** recentRestarts, policy.fastDelayMaxMs);
}

export interface SupervisorOptions {
	/**
	 * A folder for the stack's own record: `pids.json` (every service's current pid, for tests that check
	 * nothing is left) and hold files: while `hold-<name>` exists a stopped service is not restarted (the
	 * outage tests stop PostgreSQL for a while this way).
	 */
	controlDir?: string;
}

export interface ServiceSpec {
	name: string;
	command: string;
	args: string[];
	env?: NodeJS.ProcessEnv;
	cwd?: string;
	logFile: string;
	/** Resolves once the service accepts work; rejects or times out otherwise. */
	ready: () => Promise<void>;
	/** Signal for a clean stop; PostgreSQL takes SIGINT as its "fast" shutdown. */
	stopSignal?: NodeJS.Signals;
	/** Copy the service's output to this process's stdout as well as to its log file. */
	echo?: boolean;
	restart?: Partial<RestartPolicy>;
}

interface Running {
	spec: ServiceSpec;
	child: ChildProcess;
	log: WriteStream;
	/** When it was restarted, within the policy's window. */
	restartedAt: number[];
	restarts: number;
	stopping: boolean;
	pending?: NodeJS.Timeout;
}

export class Supervisor {
	private readonly running = new Map<string, Running>();
	private shuttingDown = false;

	constructor(
		private readonly say: (line: string) => void,
		private readonly options: SupervisorOptions = {}
	) {
		if (options.controlDir) mkdirSync(options.controlDir, { recursive: true });
	}

	async start(spec: ServiceSpec): Promise<void> {
		mkdirSync(dirname(spec.logFile), { recursive: true });
		const log = createWriteStream(spec.logFile, { flags: 'a' });
		const entry: Running = {
			spec,
			child: this.launch(spec, log),
			log,
			restartedAt: [],
			restarts: 0,
			stopping: false
		};
		this.running.set(spec.name, entry);
		this.recordPids();
		this.watch(entry);
		try {
			await spec.ready();
		} catch (cause) {
			throw new Error(`${spec.name} did not start; its log is ${spec.logFile}`, { cause });
		}
	}

	private launch(spec: ServiceSpec, log: WriteStream): ChildProcess {
		const child = spawn(spec.command, spec.args, {
			cwd: spec.cwd,
			env: spec.env ?? process.env,
			// stdin stays open as a lifeline: the fakes, the web server and the worker exit when it closes, so
			// they never outlive a killed parent.
			stdio: ['pipe', 'pipe', 'pipe'],
			// A group of its own: Ctrl-C in a terminal signals the whole foreground group at once, and
			// PostgreSQL would stop while the web server and worker still use it. Only this process stops
			// the services, in order.
			detached: true
		});
		// A service that dies closes its end of the lifeline; writing nothing to it never fails, but keep
		// a late EPIPE from becoming an unhandled error.
		child.stdin?.on('error', () => undefined);
		for (const stream of [child.stdout, child.stderr]) {
			stream?.on('data', (chunk: Buffer) => {
				log.write(chunk);
				if (spec.echo) process.stdout.write(chunk);
			});
		}
		return child;
	}

	private watch(entry: Running): void {
		entry.child.once('exit', (code, signal) => {
			if (entry.stopping || this.shuttingDown) return;
			const policy = { ...DEFAULT_RESTART_POLICY, ...entry.spec.restart };
			const now = Date.now();
			entry.restartedAt = entry.restartedAt.filter((at) => now - at < policy.windowMs);
			const delay = restartDelay(policy, entry.restartedAt.length);
			this.say(
				`${entry.spec.name} stopped (${signal ?? code}); restarting in ${delay} ms` +
					` (${entry.restartedAt.length} restarts in the last ${policy.windowMs / 1000} s)`
			);
			const relaunch = () => {
				entry.pending = undefined;
				if (this.shuttingDown || entry.stopping) return;
				if (this.held(entry.spec.name)) {
					entry.pending = setTimeout(relaunch, 200);
					return;
				}
				entry.restartedAt.push(Date.now());
				entry.restarts += 1;
				entry.child = this.launch(entry.spec, entry.log);
				this.recordPids();
				this.watch(entry);
			};
			entry.pending = setTimeout(relaunch, delay);
		});
	}

	private held(name: string): boolean {
		return Boolean(this.options.controlDir && existsSync(join(this.options.controlDir, `hold-${name}`)));
	}

	/** How often a service was restarted since it started (for tests and messages). */
	restarts(name: string): number {
		return this.running.get(name)?.restarts ?? 0;
	}

	/** The service's current pid, while it runs. */
	pid(name: string): number | undefined {
		const child = this.running.get(name)?.child;
		return child && child.exitCode === null && child.signalCode === null ? child.pid : undefined;
	}

	private recordPids(): void {
		if (!this.options.controlDir) return;
		const pids = Object.fromEntries(
			[...this.running].map(([name, entry]) => [name, entry.child.pid ?? null])
		);
		const file = join(this.options.controlDir, 'pids.json');
		writeFileSync(`${file}.tmp`, JSON.stringify({ supervisor: process.pid, services: pids }, null, 2));
		renameSync(`${file}.tmp`, file);
	}

	async stop(name: string, timeoutMs = 15_000): Promise<void> {
		const entry = this.running.get(name);
		if (!entry) return;
		entry.stopping = true;
		clearTimeout(entry.pending);
		const began = Date.now();
		await stopChild(entry.child, entry.spec.stopSignal ?? 'SIGTERM', timeoutMs);
		this.say(`stopped ${name} (${Date.now() - began} ms)`);
		entry.log.end();
		this.running.delete(name);
	}

	/** Stops services in the reverse order of their start. */
	async stopAll(): Promise<void> {
		this.shuttingDown = true;
		for (const name of [...this.running.keys()].reverse()) {
			await this.stop(name);
		}
	}

	/** Kills a service as a crash would (for tests of recovery); the supervisor restarts it. */
	kill(name: string): void {
		this.running.get(name)?.child.kill('SIGKILL');
	}
}

export async function stopChild(
	child: ChildProcess,
	signal: NodeJS.Signals,
	timeoutMs: number
): Promise<void> {
	if (child.exitCode !== null || child.signalCode !== null) return;
	const exited = new Promise<void>((resolve) => child.once('exit', () => resolve()));
	child.kill(signal);
	const timer = setTimeout(() => child.kill('SIGKILL'), timeoutMs);
	await exited;
	clearTimeout(timer);
}

export function waitForPort(port: number, timeoutMs = 30_000): Promise<void> {
	const deadline = Date.now() + timeoutMs;
	return new Promise((resolve, reject) => {
		const attempt = () => {
			const socket = connect({ host: '127.0.0.1', port });
			socket.once('connect', () => {
				socket.destroy();
				resolve();
			});
			socket.once('error', () => {
				socket.destroy();
				if (Date.now() > deadline) reject(new Error(`nothing answered on 127.0.0.1:${port}`));
				else setTimeout(attempt, 150);
			});
		};
		attempt();
	});
}

export async function waitFor(
	check: () => Promise<boolean>,
	what: string,
	timeoutMs = 30_000
): Promise<void> {
	const deadline = Date.now() + timeoutMs;
	while (Date.now() < deadline) {
		if (await check().catch(() => false)) return;
		await new Promise((r) => setTimeout(r, 200));
	}
	throw new Error(`timed out waiting for ${what}`);
}

/**
 * Calls `onOrphaned` once this process's parent is gone (it was re-parented): npm, for one, ends its
 * script's shell on SIGTERM but does not signal what that shell started.
 */
export function exitWithParent(onOrphaned: () => void, everyMs = 500): void {
	const parent = process.ppid;
	const timer = setInterval(() => {
		if (process.ppid === parent) return;
		clearInterval(timer);
		onOrphaned();
	}, everyMs);
	timer.unref();
}
