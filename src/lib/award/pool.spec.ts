import { spawnSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { benchmarkRules, generateProblem } from './generate';
import { buildModel } from './model';
import { LIMITS, ModelTooLarge, SolveCancelled, SolverPool } from './pool';

const pool = new SolverPool({ size: 2 });
afterAll(() => pool.close());

describe('the solver pool', () => {
	it('runs solves side by side on its workers', async () => {
		const models = [1, 2, 3, 4].map((seed) => buildModel(generateProblem({ items: 30, suppliers: 6, seed })));
		const outcomes = await Promise.all(models.map((m) => pool.solve(m, {})));
		expect(outcomes.map((o) => o.status)).toEqual(['optimal', 'optimal', 'optimal', 'optimal']);
	});

	it('stops a running solve when cancelled and keeps serving', async () => {
		const problem = generateProblem({ items: 400, suppliers: 20, seed: 3, rules: benchmarkRules });
		const controller = new AbortController();
		const running = pool.solve(buildModel(problem), { timeLimit: 60, gap: 0 }, controller.signal);
		setTimeout(() => controller.abort(), 300);
		await expect(running).rejects.toBeInstanceOf(SolveCancelled);
		const after = await pool.solve(
			buildModel(generateProblem({ items: 5, suppliers: 4, seed: 1, bidShare: 1 })),
			{}
		);
		expect(after.status).toBe('optimal');
	});

	it('refuses a model too large for the solver memory with a clear message', async () => {
		const model = buildModel(generateProblem({ items: 5, suppliers: 4, seed: 1, bidShare: 1 }));
		const huge = { ...model, indices: new Int32Array(LIMITS.lpEntries + 1) };
		await expect(pool.solve(huge, {})).rejects.toBeInstanceOf(ModelTooLarge);
		await expect(pool.solve(huge, {})).rejects.toThrow(/too large for the solver's memory/);
	});

	it('answers a solver failure with a status, and the next solve works on a fresh worker', async () => {
		const model = buildModel(generateProblem({ items: 5, suppliers: 4, seed: 1, bidShare: 1 }));
		const broken = { ...model, starts: Int32Array.from(model.starts).fill(1) };
		const outcome = await pool.solve(broken, {});
		expect(outcome.status).toBe('solver_error');
		expect((await pool.solve(model, {})).status).toBe('optimal');
	});
});

describe('the award CLI', () => {
	const folder = mkdtempSync(join(tmpdir(), 'award-cli-'));
	const run = (problem: unknown, ...flags: string[]) => {
		const file = join(folder, `${Math.random()}.json`);
		writeFileSync(file, typeof problem === 'string' ? problem : JSON.stringify(problem));
		return spawnSync(process.execPath, ['--import', 'tsx', 'src/lib/award/cli.ts', file, ...flags], {
			encoding: 'utf8'
		});
	};

	it('prints the result as JSON and exits 0', () => {
		const result = run(
			generateProblem({ items: 4, suppliers: 3, seed: 9 }),
			'--explain',
			'--time-limit',
			'10'
		);
		expect(result.status).toBe(0);
		expect(JSON.parse(result.stdout)).toMatchObject({ status: 'optimal', method: 'lp', ruleCosts: [] });
	});

	it('exits 0 with the status infeasible and the conflicts when rules clash', () => {
		const problem = generateProblem({ items: 2, suppliers: 2, seed: 4, bidShare: 1 });
		problem.rules = [
			{ type: 'max_share', scope: 'each_item', who: 'each_supplier', percent: 40, label: 'Cap 40%' }
		];
		const result = run(problem, '--explain');
		expect(result.status).toBe(0);
		const output = JSON.parse(result.stdout);
		expect(output.status).toBe('infeasible');
		expect(output.conflicts.length).toBeGreaterThan(0);
	});

	it('exits 2 with one message per problem naming its path', () => {
		const result = run({
			currency: 'EUR',
			items: [{ ref: 'IT-1', quantity: 5 }],
			suppliers: [{ ref: 'S1' }],
			bids: [{ supplier: 'S1', item: 'IT-9', unitPrice: 1 }]
		});
		expect(result.status).toBe(2);
		expect(result.stderr.trim().split('\n')).toEqual(['bids[0].item: unknown item "IT-9"']);
	});

	it('exits 2 on a file that is not JSON', () => {
		const result = run('{ not json');
		expect(result.status).toBe(2);
		expect(result.stderr).toMatch(/JSON/);
	});
});
