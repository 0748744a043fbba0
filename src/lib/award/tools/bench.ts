// npm run --silent bench:award -- [--size IxS] [--mode lp|rules] [--repeat N] [--json] [--skip-glpk]
// Seeded invented events (70% of suppliers bid per item, capacities; `rules` adds a 60% share cap, a
// minimum award of 20% of the item and at most 3 suppliers per item). Each case runs in a child
// process of its own so that its peak memory is its own. In the same run and on the same problems:
// glpk.js (stopped at 120 s) and native CBC (Debian coinor-cbc, when installed) reading the same model
// as an LP file with generated names. Prints a table, or JSON with --json, and writes
// bench-results/award-<date>.json when run over the default sizes.
import { spawnSync } from 'node:child_process';
import { mkdirSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { parseArgs } from 'node:util';
import { solveAward } from '../core/engine';
import { buildModel, type AwardModel } from '../core/model';
import { SolverPool } from '../runtime/pool';
import { benchmarkRules, generateProblem } from './generate';

interface Measure {
	size: string;
	mode: 'lp' | 'rules';
	buildMs: number;
	solveMs: number;
	totalMs: number;
	peakRssMb: number;
	objective: number | null;
	gap: number | null;
	method: string;
	status: string;
	glpk: { ms: number; objective: number | null; status: string } | null;
	cbc: { ms: number; objective: number | null; status: string } | null;
}

const { values } = parseArgs({
	options: {
		size: { type: 'string' },
		mode: { type: 'string' },
		repeat: { type: 'string', default: '1' },
		json: { type: 'boolean', default: false },
		one: { type: 'boolean', default: false },
		'skip-references': { type: 'boolean', default: false },
		'skip-glpk': { type: 'boolean', default: false }
	}
});

const problemFor = (size: string, mode: string) => {
	const [items, suppliers] = size.split('x').map(Number) as [number, number];
	return generateProblem({
		items,
		suppliers,
		seed: 20261201,
		capacity: true,
		rules: mode === 'rules' ? benchmarkRules : []
	});
};

/** CPLEX LP text with names we generate (x0, r0, ...), never names from the data. */
function lpText(model: AwardModel): string {
	const rows: string[][] = Array.from({ length: model.numRows }, () => []);
	for (let j = 0; j < model.numCols; j++) {
		for (let k = model.starts[j]!; k < model.starts[j + 1]!; k++)
			rows[model.indices[k]!]!.push(
				`${model.values[k]! >= 0 ? '+' : '-'} ${Math.abs(model.values[k]!)} x${j}`
			);
	}
	const out = [
		'Minimize',
		` obj: ${Array.from(model.colCost, (c, j) => `${c >= 0 ? '+' : '-'} ${Math.abs(c)} x${j}`).join(' ')}`,
		'Subject To'
	];
	rows.forEach((terms, r) => {
		if (!terms.length) return;
		const lhs = terms.join(' ');
		const lower = model.rowLower[r]!;
		const upper = model.rowUpper[r]!;
		if (lower === upper) out.push(` r${r}: ${lhs} = ${lower}`);
		else {
			if (Number.isFinite(lower)) out.push(` r${r}l: ${lhs} >= ${lower}`);
			if (Number.isFinite(upper)) out.push(` r${r}u: ${lhs} <= ${upper}`);
		}
	});
	out.push('Bounds');
	for (let j = 0; j < model.numCols; j++) {
		const upper = model.colUpper[j]!;
		out.push(` ${model.colLower[j]} <= x${j} <= ${Number.isFinite(upper) ? upper : '+inf'}`);
	}
	const binaries = Array.from(model.integrality, (v, j) => (v ? `x${j}` : '')).filter(Boolean);
	if (binaries.length) out.push('General', ` ${binaries.join(' ')}`);
	out.push('End');
	return out.join('\n');
}

function runCbc(model: AwardModel): Measure['cbc'] {
	if (spawnSync('which', ['cbc']).status !== 0) return null;
	const folder = mkdtempSync(join(tmpdir(), 'bench-cbc-'));
	try {
		const file = join(folder, 'award.lp');
		writeFileSync(file, lpText(model));
		const began = performance.now();
		const result = spawnSync('cbc', [file, 'sec', '120', 'ratio', '0.0001', 'solve', 'quit'], {
			encoding: 'utf8',
			timeout: 200_000,
			maxBuffer: 64 * 1024 * 1024
		});
		const ms = performance.now() - began;
		const objective = (/Objective value:\s+(-?[\d.eE+-]+)/.exec(result.stdout) ??
			/objective value\s+(-?[\d.eE+-]+)/i.exec(result.stdout))?.[1];
		const status =
			/Result - (.+)/.exec(result.stdout)?.[1]?.trim() ??
			/^(Optimal|Infeasible|Stopped)\b.*$/m.exec(result.stdout)?.[1] ??
			(result.signal ? `killed (${result.signal})` : 'unknown');
		return { ms, objective: objective ? Number(objective) : null, status };
	} finally {
		rmSync(folder, { recursive: true, force: true });
	}
}

async function runGlpk(model: AwardModel): Promise<Measure['glpk']> {
	const { default: GLPK } = await import('glpk.js/node');
	const glpk = await GLPK();
	const vars = (j: number) => `x${j}`;
	const rows: { name: string; coef: number }[][] = Array.from({ length: model.numRows }, () => []);
	for (let j = 0; j < model.numCols; j++)
		for (let k = model.starts[j]!; k < model.starts[j + 1]!; k++)
			rows[model.indices[k]!]!.push({ name: vars(j), coef: model.values[k]! });
	const bound = (lower: number, upper: number) =>
		lower === upper
			? { type: glpk.GLP_FX, lb: lower, ub: upper }
			: Number.isFinite(lower) && Number.isFinite(upper)
				? { type: glpk.GLP_DB, lb: lower, ub: upper }
				: Number.isFinite(lower)
					? { type: glpk.GLP_LO, lb: lower, ub: 0 }
					: Number.isFinite(upper)
						? { type: glpk.GLP_UP, lb: 0, ub: upper }
						: { type: glpk.GLP_FR, lb: 0, ub: 0 };
	const began = performance.now();
	const result = glpk.solve(
		{
			name: 'award',
			objective: {
				direction: glpk.GLP_MIN,
				name: 'cost',
				vars: Array.from(model.colCost, (coef, j) => ({ name: vars(j), coef }))
			},
			subjectTo: rows
				.map((terms, r) => ({
					name: `r${r}`,
					vars: terms,
					bnds: bound(model.rowLower[r]!, model.rowUpper[r]!)
				}))
				.filter((r) => r.vars.length),
			bounds: Array.from(model.colLower, (lower, j) => ({
				name: vars(j),
				...bound(lower, model.colUpper[j]!)
			})),
			generals: Array.from(model.integrality, (v, j) => (v ? vars(j) : '')).filter(Boolean)
		},
		{ msglev: glpk.GLP_MSG_OFF, tmlim: 120, mipgap: 1e-4 }
	);
	const ms = performance.now() - began;
	const optimal = result.result.status === glpk.GLP_OPT;
	const feasible = result.result.status === glpk.GLP_FEAS;
	return {
		ms,
		objective: optimal || feasible ? result.result.z : null,
		status: optimal ? 'optimal' : feasible ? 'feasible (time limit)' : `status ${result.result.status}`
	};
}

async function measureOne(size: string, mode: 'lp' | 'rules'): Promise<Measure> {
	const problem = problemFor(size, mode);
	const pool = new SolverPool();
	try {
		// Warm up as a running server is warm: every worker has solved (the first HiGHS solve in a thread
		// is slower) and the engine's own code has run once end to end on a smaller event of the same kind.
		const warm = buildModel(generateProblem({ items: 20, suppliers: 4, seed: 1, bidShare: 1 }));
		await Promise.all(Array.from({ length: pool.size }, () => pool.solve(warm, {})));
		await solveAward(problemFor('500x20', mode), pool, { timeLimit: 120, gap: 1e-4 });
		const began = performance.now();
		const result = await solveAward(problem, pool, { timeLimit: 120, gap: 1e-4 });
		const totalMs = performance.now() - began;
		// Peak memory of the engine's own work, read before the extra builds below.
		const peakRssMb = process.resourceUsage().maxRSS / 1024;
		// The build column times the model the engine built (for lp_guided, its LP without the
		// integer-only rules); solve = total - build. The references get the full model.
		const integerOnly = new Set(
			problem.rules.flatMap((r, k) =>
				r.type === 'min_award' || r.type === 'supplier_count' || r.type === 'award_fixed_cost' ? [k] : []
			)
		);
		const buildBegan = performance.now();
		buildModel(problem, result.method === 'lp_guided' ? { withoutRules: integerOnly } : {});
		const buildMs = performance.now() - buildBegan;
		const model = buildModel(problem);
		const skip = values['skip-references'];
		return {
			size,
			mode,
			buildMs,
			solveMs: totalMs - buildMs,
			totalMs,
			peakRssMb,
			objective: result.totalCost,
			gap: result.gap,
			method: result.method,
			status: result.status,
			glpk: skip || values['skip-glpk'] ? null : await runGlpk(model),
			cbc: skip ? null : runCbc(model)
		};
	} finally {
		await pool.close();
	}
}

const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)]!;

function childMeasure(size: string, mode: string): Measure {
	const args = ['--import', 'tsx', 'src/lib/award/tools/bench.ts', '--one', '--size', size, '--mode', mode];
	if (values['skip-references']) args.push('--skip-references');
	if (values['skip-glpk']) args.push('--skip-glpk');
	const child = spawnSync(process.execPath, args, { encoding: 'utf8', maxBuffer: 16 * 1024 * 1024 });
	if (child.status !== 0) throw new Error(`bench ${size} ${mode} failed: ${child.stderr}`);
	return JSON.parse(child.stdout.trim().split('\n').at(-1)!) as Measure;
}

if (values.one) {
	console.log(JSON.stringify(await measureOne(values.size!, values.mode as 'lp' | 'rules')));
} else {
	const sizes = values.size ? [values.size] : ['200x10', '1000x20', '5000x40', '10000x50'];
	const modes = values.mode ? [values.mode] : ['lp', 'rules'];
	for (const size of sizes)
		if (!/^\d+x\d+$/.test(size)) throw new Error(`--size: expected IxS such as 1000x20, not "${size}"`);
	const repeat = Math.max(1, Number(values.repeat));
	const results: Measure[] = [];
	for (const size of sizes)
		for (const mode of modes) {
			const runs = Array.from({ length: repeat }, () => childMeasure(size, mode));
			const pick = runs.find((r) => r.totalMs === median(runs.map((x) => x.totalMs)))!;
			results.push(pick);
			if (!values.json) process.stderr.write(`${size} ${mode}: ${Math.round(pick.totalMs)} ms\n`);
		}
	if (values.json) console.log(JSON.stringify(results, null, 2));
	else {
		const f = (n: number | null | undefined, digits = 0) =>
			n === null || n === undefined ? '-' : n.toFixed(digits);
		console.log(
			'| size | mode | build ms | solve ms | total ms | peak RSS MB | objective | gap | method | glpk.js ms | glpk.js objective | CBC ms | CBC objective |'
		);
		console.log('|---|---|---|---|---|---|---|---|---|---|---|---|---|');
		for (const r of results) {
			console.log(
				`| ${r.size} | ${r.mode} | ${f(r.buildMs)} | ${f(r.solveMs)} | ${f(r.totalMs)} | ${f(r.peakRssMb)} | ${f(r.objective, 2)} | ${r.gap === null ? '-' : r.gap.toExponential(1)} | ${r.method} | ${f(r.glpk?.ms)} | ${r.glpk?.objective === null || !r.glpk ? (r.glpk?.status ?? '-') : r.glpk.objective.toFixed(2)} | ${f(r.cbc?.ms)} | ${r.cbc?.objective === null || !r.cbc ? (r.cbc?.status ?? 'not installed') : r.cbc.objective.toFixed(2)} |`
			);
		}
	}
	if (!values.size && !values.mode) {
		mkdirSync('bench-results', { recursive: true });
		const file = join('bench-results', `award-${new Date().toISOString().slice(0, 10)}.json`);
		writeFileSync(file, JSON.stringify(results, null, 2));
		if (!values.json) console.log(`\nwritten to ${file}`);
	}
}
