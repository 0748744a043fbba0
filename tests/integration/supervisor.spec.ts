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
		// 3 fast restarts per 1.5 s window, 10-40 ms apart; then 300 ms between restarts.
		const policy = {
			windowMs: 1_500,
			fastRestarts: 3,
			firstDelayMs: 10,
			fastDelayMaxMs: 40,
			slowDelayMs: 300
		};
		await supervisor.start(crasher('crasher', policy));
		await sleep(4_000);
		const restarts = supervisor.restarts('crasher');
		await supervisor.stopAll();

		// Never gave up: far more than the 5 restarts the old supervisor allowed over the stack's life.
		expect(restarts).toBeGreaterThan(8);
		expect(lines.some((l) => /giving up/.test(l))).toBe(false);
		// Bounded by the window: at most 3 fast ones plus one slow one per 300 ms in 4 s (without the slow
		// delay, 4 s of 10-40 ms back-off would be about a hundred).
		expect(restarts).toBeLessThan(3 + Math.ceil(4_000 / 300) + 3);
		// Both kinds of wait were used.
		expect(lines.some((l) => /restarting in 10 ms/.test(l))).toBe(true);
		expect(lines.some((l) => /restarting in 300 ms/.test(l))).toBe(true);
	});

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
