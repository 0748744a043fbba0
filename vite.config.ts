import { sveltekit } from '@sveltejs/kit/vite';
import tailwindcss from '@tailwindcss/vite';
import { defineConfig } from 'vitest/config';

/**
 * Browser tests that must run with nothing else: each moves the server's clock past a deadline, stops
 * PostgreSQL or starts a second stack. They run one at a time, after every other test.
 */
const ALONE_BROWSER = [
	'tests/e2e/award-journeys.e2e.ts',
	'tests/e2e/database-outage.e2e.ts',
	'tests/e2e/events-and-bids.e2e.ts',
	'tests/e2e/rounds.e2e.ts',
	'tests/e2e/shutdown.e2e.ts'
];

/**
 * Integration tests that run one at a time after the others: they hold the stack's one worker for long
 * solves (a run waiting behind them would time out), or measure the server's answer times.
 */
const ALONE_INTEGRATION = [
	'tests/integration/run-progress.spec.ts',
	'tests/integration/run-takeover.spec.ts',
	'tests/integration/award-run-recovery.spec.ts',
	'tests/integration/hostile-uploads.spec.ts',
	'tests/integration/attack-sign-in.spec.ts'
];

export default defineConfig({
	plugins: [tailwindcss(), sveltekit()],
	server: { host: '127.0.0.1' },
	preview: { host: '127.0.0.1' },
	test: {
		// The three kinds of test of DEVELOPERS.md; the stack runner (docker-free-fakes/stack.ts) hands
		// integration and browser tests the URLs of the services it started through the environment.
		projects: [
			{
				extends: true,
				test: {
					name: 'unit',
					include: ['src/**/*.spec.ts'],
					environment: 'node',
					// Unit tests are CPU-bound (the solver, with a pool of its own threads): one file at a time,
					// before the integration tests. The timeout is a hang guard, not a speed check (speed is
					// for the benchmarks): a busy machine may take several times as long as an idle one.
					maxWorkers: 1,
					testTimeout: 60_000,
					// From 1: vitest puts a one-worker project of group 0 after every numbered group.
					sequence: { groupOrder: 1 }
				}
			},
			{
				extends: true,
				test: {
					name: 'integration',
					include: ['tests/integration/**/*.spec.ts'],
					exclude: ALONE_INTEGRATION,
					environment: 'node',
					testTimeout: 30_000,
					hookTimeout: 30_000,
					// Integration tests mostly wait for the server, the worker and the mail fake; each makes its
					// own events, suppliers and queues, so three files at a time share the two cores well.
					maxWorkers: 3,
					sequence: { groupOrder: 2 }
				}
			},
			{
				extends: true,
				test: {
					name: 'integration-alone',
					include: ALONE_INTEGRATION,
					environment: 'node',
					testTimeout: 30_000,
					hookTimeout: 30_000,
					fileParallelism: false,
					sequence: { groupOrder: 3 }
				}
			},
			{
				extends: true,
				test: {
					name: 'e2e',
					include: ['tests/e2e/**/*.e2e.ts'],
					exclude: ALONE_BROWSER,
					environment: 'node',
					testTimeout: 90_000,
					hookTimeout: 120_000,
					// A browser and the pages it asks for: two files at a time fill the two cores.
					maxWorkers: 2,
					sequence: { groupOrder: 4 }
				}
			},
			{
				extends: true,
				test: {
					name: 'e2e-alone',
					include: ALONE_BROWSER,
					environment: 'node',
					testTimeout: 90_000,
					hookTimeout: 60_000,
					fileParallelism: false,
					sequence: { groupOrder: 5 }
				}
			}
		]
	}
});
