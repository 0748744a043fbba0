// The processes of a local stack, for the shutdown and outage tests: the stack's own record of pids
// (docker-free-fakes/supervisor.ts writes run/pids.json), its hold files, and PostgreSQL's pid file.
import { execFileSync } from 'node:child_process';
import { existsSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { createServer, connect } from 'node:net';
import { join } from 'node:path';

export interface StackPids {
	supervisor: number;
	services: Record<string, number | null>;
}

export const readStackPids = (controlDir: string): StackPids =>
	JSON.parse(readFileSync(join(controlDir, 'pids.json'), 'utf8')) as StackPids;

/** Alive and not a zombie waiting to be reaped. */
export function isRunning(pid: number): boolean {
	try {
		process.kill(pid, 0);
	} catch {
		return false;
	}
	try {
		const stat = readFileSync(`/proc/${pid}/stat`, 'utf8');
		return stat.slice(stat.lastIndexOf(')') + 2)[0] !== 'Z';
	} catch {
		return false;
	}
}

/** Every process below `pid` (children, their children…), from `ps`. */
export function descendants(pid: number): number[] {
	const rows = execFileSync('ps', ['-eo', 'pid=,ppid='], { encoding: 'utf8' })
		.trim()
		.split('\n')
		.map((line) => line.trim().split(/\s+/).map(Number) as [number, number]);
	const found: number[] = [];
	const queue = [pid];
	while (queue.length) {
		const parent = queue.shift()!;
		for (const [child, ppid] of rows)
			if (ppid === parent && !found.includes(child)) {
				found.push(child);
				queue.push(child);
			}
	}
	return found;
}

/** `ps` lines that mention any of the words (a data folder, a port), this test's own process excepted. */
export function processesMentioning(words: string[]): string[] {
	return execFileSync('ps', ['-eo', 'pid=,args='], { encoding: 'utf8' })
		.split('\n')
		.filter((line) => words.some((w) => line.includes(w)))
		.filter((line) => !line.includes('ps -eo'));
}

export function portIsFree(port: number): Promise<boolean> {
	return new Promise((resolve) => {
		const server = createServer();
		server.once('error', () => resolve(false));
		server.listen(port, '127.0.0.1', () => server.close(() => resolve(true)));
	});
}

export function portAnswers(port: number): Promise<boolean> {
	return new Promise((resolve) => {
		const socket = connect({ host: '127.0.0.1', port });
		socket.once('connect', () => {
			socket.destroy();
			resolve(true);
		});
		socket.once('error', () => {
			socket.destroy();
			resolve(false);
		});
	});
}

export async function until(check: () => boolean | Promise<boolean>, what: string, timeoutMs: number) {
	const deadline = Date.now() + timeoutMs;
	while (Date.now() < deadline) {
		if (await check()) return;
		await new Promise((r) => setTimeout(r, 200));
	}
	throw new Error(`timed out after ${timeoutMs} ms waiting for ${what}`);
}

/**
 * Stops the test stack's PostgreSQL the way `pg_ctl stop -m fast` does (SIGINT to the postmaster) and
 * keeps the supervisor from starting it again until `restart` is called: then the supervisor starts the
 * same binaries on the same port and data folder. The stack hands the tests STACK_CONTROL_DIR and
 * PG_DATA_DIR (docker-free-fakes/stack.ts).
 */
export async function stopPostgres(port: number): Promise<{ restart: () => Promise<void> }> {
	const controlDir = process.env.STACK_CONTROL_DIR;
	const dataDir = process.env.PG_DATA_DIR;
	if (!controlDir || !dataDir) throw new Error('STACK_CONTROL_DIR and PG_DATA_DIR are set by npm test');
	const hold = join(controlDir, 'hold-postgresql');
	writeFileSync(hold, 'the outage test holds PostgreSQL stopped\n');
	const pid = Number(readFileSync(join(dataDir, 'postmaster.pid'), 'utf8').split('\n')[0]);
	process.kill(pid, 'SIGINT');
	await until(() => !isRunning(pid), 'PostgreSQL to stop', 30_000);
	await until(async () => !(await portAnswers(port)), 'PostgreSQL to stop listening', 10_000);
	return {
		restart: async () => {
			rmSync(hold, { force: true });
			await until(() => existsSync(join(dataDir, 'postmaster.pid')), 'PostgreSQL to start again', 30_000);
			await until(() => portAnswers(port), 'PostgreSQL to listen again', 30_000);
		}
	};
}
