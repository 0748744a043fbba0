import { afterAll, describe, expect, it } from 'vitest';
import { buildModel } from '../core/model';
import { benchmarkRules, generateProblem } from '../tools/generate';
import { LIMITS, ModelTooLarge, SolveCancelled, SolverPool } from './pool';

const pool = new SolverPool({ size: 2 });
afterAll(() => pool.close());

// The first solves start worker threads that load tsx and HiGHS: seconds on a loaded machine.
describe('the solver pool', { timeout: 30_000 }, () => {
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
