// npm run --silent award -- problem.json [--time-limit S] [--gap G] [--explain] [--method auto|monolithic|decomposed|lp_guided|lagrangian]
// Prints the result as JSON on stdout. Exit 0 when it solved or proved infeasible (the status says
// which), 1 when the solver failed, 2 on invalid input (one message per problem on stderr).
import { readFileSync } from 'node:fs';
import { parseArgs } from 'node:util';
import { solveAward } from '../core/engine';
import { parseProblem } from '../core/problem';
import { SolverPool } from '../runtime/pool';

function fail(problems: string[]): never {
	for (const problem of problems) console.error(problem);
	console.log(JSON.stringify({ status: 'invalid_input', problems }, null, 2));
	process.exit(2);
}

const { values, positionals } = parseArgs({
	allowPositionals: true,
	options: {
		'time-limit': { type: 'string' },
		gap: { type: 'string' },
		explain: { type: 'boolean', default: false },
		method: { type: 'string', default: 'auto' }
	}
});

const file = positionals[0];
if (!file) fail(['usage: npm run --silent award -- problem.json [--time-limit S] [--gap G] [--explain]']);
const number = (name: string, text: string | undefined) => {
	if (text === undefined) return undefined;
	const value = Number(text);
	if (!Number.isFinite(value) || value <= 0) fail([`--${name}: must be a number > 0, not "${text}"`]);
	return value;
};
const timeLimit = number('time-limit', values['time-limit']);
const gap = number('gap', values.gap);
const method = values.method as 'auto' | 'monolithic' | 'decomposed' | 'lp_guided' | 'lagrangian';
if (!['auto', 'monolithic', 'decomposed', 'lp_guided', 'lagrangian'].includes(method))
	fail([`--method: must be auto, monolithic, decomposed, lp_guided or lagrangian, not "${method}"`]);

let input: unknown;
try {
	input = JSON.parse(readFileSync(file, 'utf8'));
} catch (error) {
	fail([`${file}: ${(error as Error).message}`]);
}
const parsed = parseProblem(input);
if (!parsed.ok) fail(parsed.problems);

const pool = new SolverPool();
try {
	const result = await solveAward(parsed.problem, pool, { timeLimit, gap, explain: values.explain, method });
	console.log(JSON.stringify(result, null, 2));
	process.exitCode = result.status === 'solver_error' ? 1 : 0;
} catch (error) {
	console.error((error as Error).message);
	process.exitCode = 1;
} finally {
	await pool.close();
}
