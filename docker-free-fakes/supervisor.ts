// A small process supervisor: starts each local service as a child process, waits until it answers,
// restarts it when it dies unexpectedly, and stops every child on shutdown.
import { spawn, type ChildProcess } from 'node:child_process';
import { createWriteStream, mkdirSync, type WriteStream } from 'node:fs';
import { connect } from 'node:net';
import { dirname } from 'node:path';

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
	maxRestarts?: number;
}

interface Running {
	spec: ServiceSpec;
	child: ChildProcess;
	log: WriteStream;
	restarts: number;
	stopping: boolean;
}

export class Supervisor {
	private readonly running = new Map<string, Running>();
	private shuttingDown = false;

	constructor(private readonly say: (line: string) => void) {}

	async start(spec: ServiceSpec): Promise<void> {
		mkdirSync(dirname(spec.logFile), { recursive: true });
		const log = createWriteStream(spec.logFile, { flags: 'a' });
		const entry: Running = { spec, child: this.launch(spec, log), log, restarts: 0, stopping: false };
		this.running.set(spec.name, entry);
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
			// stdin stays open as a lifeline: the fakes exit when it closes, so they never outlive a killed parent
			stdio: ['pipe', 'pipe', 'pipe']
		});
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
			const limit = entry.spec.maxRestarts ?? 5;
			if (entry.restarts >= limit) {
				this.say(
					`${entry.spec.name} stopped (${signal ?? code}) and was restarted ${limit} times; giving up`
				);
				return;
			}
			entry.restarts += 1;
			const delay = Math.min(500 * 2 ** entry.restarts, 10_000);
			this.say(`${entry.spec.name} stopped (${signal ?? code}); restarting in ${delay} ms`);
			setTimeout(() => {
				if (this.shuttingDown || entry.stopping) return;
				entry.child = this.launch(entry.spec, entry.log);
				this.watch(entry);
			}, delay).unref();
		});
	}

	async stop(name: string, timeoutMs = 15_000): Promise<void> {
		const entry = this.running.get(name);
		if (!entry) return;
		entry.stopping = true;
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
