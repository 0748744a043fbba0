// The local stack's process supervisor (docker-free-fakes/supervisor.ts): a service that keeps crashing
// is restarted for as long as the stack runs, quickly at first and then every slowDelayMs while it has
// used up its fast restarts within the window. Before: it gave up after 5 restarts over the stack's life.
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import {
	DEFAULT_RESTART_POLICY,
	restartDelay,
	Supervisor,
	type ServiceSpec
} from '../../docker-free-fakes/supervisor';

const scratch = mkdtempSync(join(tmpdir(), 'tenderloom-supervisor-'));
afterAll(() => rmSync(scratch, { recursive: true, force: true }));

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

/** A child that exits at once, every time it is started. */
const crasher = (name: string, restart: ServiceSpec['restart']): ServiceSpec => ({
	name,
	command: process.execPath,
	args: ['-e', 'process.exit(3)'],
	logFile: join(scratch, `${name}.log`),
	ready: async () => undefined,
	restart
});

describe('restart back-off', () => {
	it('doubles while restarts in the window are few, then waits the long delay, for ever', () => {
		const policy = DEFAULT_RESTART_POLICY;
		expect([0, 1, 2, 3, 4].map((n) => restartDelay(policy, n))).toEqual([500, 1000, 2000, 4000, 8000]);
		expect(restartDelay(policy, 5)).toBe(30_000);
		expect(restartDelay(policy, 500)).toBe(30_000);
	});
});

describe('Supervisor', () => {
	it('restarts a child that exits at once for ever: fast restarts limited per window, then slower', async () => {
		const lines: string[] = [];
		const supervisor = new Supervisor((line) => lines.push(line));
		// 3 fast restarts per minute, 10-40 ms apart; then 300 ms between restarts.
		const policy = {
			windowMs: 60_000,
			fastRestarts: 3,
			firstDelayMs: 10,
			fastDelayMaxMs: 40,
			slowDelayMs: 300
		};
		await supervisor.start(crasher('crasher', policy));
		// Time-independent (a loaded machine starts node slowly): wait for the restarts, not for a clock.
		const deadline = Date.now() + 60_000;
		while (supervisor.restarts('crasher') < 8 && Date.now() < deadline) await sleep(100);
		const restarts = supervisor.restarts('crasher');
		await supervisor.stopAll();

		// Never gave up: more than the 5 restarts the old supervisor allowed over the stack's life.
		expect(restarts).toBeGreaterThanOrEqual(8);
		expect(lines.some((l) => /giving up/.test(l))).toBe(false);
		// Doubling while the window holds fewer than 3 restarts, then the long delay every time.
		const delays = lines.map((l) => Number(/restarting in (\d+) ms/.exec(l)?.[1])).slice(0, 8);
		expect(delays).toEqual([10, 20, 40, 300, 300, 300, 300, 300]);
	}, 90_000);

	it('holds a restart while the hold file exists, and records pids for the stack', async () => {
		const controlDir = join(scratch, 'run');
		const supervisor = new Supervisor(() => undefined, { controlDir });
		await supervisor.start({
			name: 'sleeper',
			command: process.execPath,
			args: ['-e', 'setTimeout(() => undefined, 60_000)'],
			logFile: join(scratch, 'sleeper.log'),
			ready: async () => undefined,
			restart: { firstDelayMs: 10 }
		});
		const first = supervisor.pid('sleeper');
		const pids = JSON.parse(readFileSync(join(controlDir, 'pids.json'), 'utf8')) as {
			supervisor: number;
			services: Record<string, number>;
		};
		expect(pids).toEqual({ supervisor: process.pid, services: { sleeper: first } });

		writeFileSync(join(controlDir, 'hold-sleeper'), '');
		process.kill(first!, 'SIGKILL');
		await sleep(800);
		expect(supervisor.pid('sleeper'), 'held: not restarted').toBeUndefined();
		rmSync(join(controlDir, 'hold-sleeper'));
		await sleep(600);
		const second = supervisor.pid('sleeper');
		expect(second).toBeDefined();
		expect(second).not.toBe(first);
		await supervisor.stopAll();
		expect(existsSync(join(controlDir, 'pids.json'))).toBe(true);
	});
});
