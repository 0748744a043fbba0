// The award CLI (npm run award), run as a child process the way a user runs it.
import { spawnSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { generateProblem } from './generate';

// Each case starts a Node process under tsx: seconds on a loaded 2-core machine, so a longer timeout.
describe('the award CLI', { timeout: 30_000 }, () => {
	const folder = mkdtempSync(join(tmpdir(), 'award-cli-'));
	const run = (problem: unknown, ...flags: string[]) => {
		const file = join(folder, `${Math.random()}.json`);
		writeFileSync(file, typeof problem === 'string' ? problem : JSON.stringify(problem));
		return spawnSync(process.execPath, ['--import', 'tsx', 'src/lib/award/tools/cli.ts', file, ...flags], {
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
