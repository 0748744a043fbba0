// npm run --silent bench:award -- [--size IxS[,IxS]] [--mode MODE[,MODE]|all] [--time-limit S] [--repeat N]
//   [--json] [--skip-references] [--skip-glpk] [--help]
// Seeded invented events (70% of suppliers bid per item, capacities). `rules` adds the item rules (a 60%
// share cap, a minimum award of 20% of the item and at most 3 suppliers per item); `lot` and `event` add
// rules that link items on top of those, `fixed` a fixed cost per supplier awarded (generate.ts). Each
// case runs in a child process of its own so that its peak memory is its own. In the same run and on the
// same problems: glpk.js (lp and rules only) and native CBC (Debian coinor-cbc, when installed) reading
// the same model as an LP file with generated names, with the same time limit. Prints a table, or JSON
// with --json, and writes bench-results/award-<date>.json when run over the default sizes and modes.
import { spawnSync } from 'node:child_process';
import { closeSync, mkdirSync, mkdtempSync, openSync, rmSync, writeFileSync, writeSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { parseArgs } from 'node:util';
import { solveAward } from '../core/engine';
import { buildModel, type AwardModel } from '../core/model';
import { SolverPool } from '../runtime/pool';
import {
	benchmarkRules,
	eventBenchmarkRules,
	fixedCostBenchmarkRule,
	generateProblem,
	lotBenchmarkRules
} from './generate';

export const MODES = ['lp', 'rules', 'lot', 'event', 'fixed'] as const;
export type Mode = (typeof MODES)[number];

/** The sizes each mode runs when --size is not given. */
export const DEFAULT_SIZES: Record<Mode, string[]> = {
	lp: ['200x10', '1000x20', '5000x40', '10000x50'],
	rules: ['200x10', '1000x20', '5000x40', '10000x50'],
	lot: ['2000x30', '5000x40', '10000x50'],
	event: ['2000x30', '5000x40', '10000x50'],
	fixed: ['2000x30', '5000x40', '10000x50']
};

/** The modes run when --mode is not given: those of the figures recorded in DEVELOPERS.md. */
const DEFAULT_MODES: Mode[] = ['lp', 'rules'];

/** Lots of the `lot` mode's events (generateProblem's `lots`). */
const LOTS = 4;

export const USAGE = `Usage: npm run --silent bench:award -- [options]

Solves seeded invented events with the award engine and, on the same models, with glpk.js and native CBC
(Debian coinor-cbc, when installed). Each case runs in a child process of its own.

Options:
  --size IxS[,IxS]     items x suppliers, e.g. 1000x20 (default: each mode's sizes below)
  --mode M[,M] | all   one or more modes, comma-separated, or all of them (default: lp,rules)
  --time-limit S       seconds for the engine, CBC and glpk.js alike (default: 120)
  --repeat N           run each case N times and report the run of median total time (default: 1)
  --json               print the results as JSON instead of a table
  --skip-references    run neither glpk.js nor CBC
  --skip-glpk          do not run glpk.js
  --help               print this and exit

Modes (default sizes):
  lp      no rules: one LP (${DEFAULT_SIZES.lp.join(', ')})
  rules   item rules: at most 60% of an item to one supplier, awards of at least 20% of an item,
          at most 3 suppliers per item (${DEFAULT_SIZES.rules.join(', ')})
  lot     item rules, and in each of ${LOTS} lots at most 70% of its spend to one supplier and at least
          2 suppliers (${DEFAULT_SIZES.lot.join(', ')})
  event   item rules, small businesses (one supplier in seven) at least 15% of the event's spend, at most
          12 suppliers over the event (${DEFAULT_SIZES.event.join(', ')})
  fixed   a fixed cost per supplier awarded, 2% of an average supplier's share of the baseline spend
          (${DEFAULT_SIZES.fixed.join(', ')})

glpk.js runs in the lp and rules modes only. CBC runs with "preprocess off" on models with integers.
Without --size and --mode the results are also written to bench-results/award-<date>.json.
`;

/** A wrong option value; its message names the value. */
export class BenchArgumentError extends Error {
	constructor(message: string) {
		super(message);
		this.name = 'BenchArgumentError';
	}
}

export interface BenchArgs {
	help: boolean;
	/** The cases in the order they run. */
	cases: { size: string; mode: Mode }[];
	/** Whether the run is over the default sizes and modes (then the results are written to a file). */
	defaults: boolean;
	timeLimit: number;
	repeat: number;
	json: boolean;
	one: boolean;
	skipReferences: boolean;
	skipGlpk: boolean;
}

const list = (value: string) => value.split(',').map((v) => v.trim());

/** Reads the command line; throws BenchArgumentError (or parseArgs's own error) naming a bad value. */
export function readBenchArgs(argv: string[]): BenchArgs {
	const { values } = parseArgs({
		args: argv,
		strict: true,
		allowPositionals: false,
		options: {
			size: { type: 'string' },
			mode: { type: 'string' },
			'time-limit': { type: 'string', default: '120' },
			repeat: { type: 'string', default: '1' },
			json: { type: 'boolean', default: false },
			one: { type: 'boolean', default: false },
			'skip-references': { type: 'boolean', default: false },
			'skip-glpk': { type: 'boolean', default: false },
			help: { type: 'boolean', default: false }
		}
	});
	const modes: Mode[] =
		values.mode === undefined
			? DEFAULT_MODES
			: values.mode === 'all'
				? [...MODES]
				: list(values.mode).map((mode) => {
						if (!(MODES as readonly string[]).includes(mode))
							throw new BenchArgumentError(
								`--mode: unknown mode "${mode}" (modes: ${MODES.join(', ')}, or all)`
							);
						return mode as Mode;
					});
	const sizes = values.size === undefined ? null : list(values.size);
	for (const size of sizes ?? []) {
		const match = /^(\d+)x(\d+)$/.exec(size);
		if (!match || Number(match[1]) < 1 || Number(match[2]) < 1)
			throw new BenchArgumentError(
				`--size: expected items x suppliers such as 1000x20, both at least 1, not "${size}"`
			);
	}
	const timeLimit = Number(values['time-limit']);
	if (!(timeLimit > 0) || !Number.isFinite(timeLimit))
		throw new BenchArgumentError(
			`--time-limit: expected a number of seconds above 0, not "${values['time-limit']}"`
		);
	const repeat = Number(values.repeat);
	if (!Number.isInteger(repeat) || repeat < 1)
		throw new BenchArgumentError(`--repeat: expected a whole number of at least 1, not "${values.repeat}"`);
	// Default sizes run in the order of their size, each in every mode that has it (lp then rules, as ever).
	const allSizes = sizes ?? [...new Set(modes.flatMap((m) => DEFAULT_SIZES[m]))];
	const byItems = (a: string, b: string) => Number(a.split('x')[0]) - Number(b.split('x')[0]);
	const cases = (sizes ? allSizes : allSizes.sort(byItems)).flatMap((size) =>
		modes.filter((mode) => sizes || DEFAULT_SIZES[mode].includes(size)).map((mode) => ({ size, mode }))
	);
	return {
		help: values.help,
		cases,
		defaults: values.size === undefined && values.mode === undefined,
		timeLimit,
		repeat,
		json: values.json,
		one: values.one,
		skipReferences: values['skip-references'],
		skipGlpk: values['skip-glpk']
	};
}

/** A reference solver's answer on the same model. */
interface Reference {
	status: string;
	ms: number | null;
	/** Best award found (objective), null when none. */
	objective: number | null;
	/** Proven lower bound, null when the solver gave none. */
	bound: number | null;
	/** (objective - bound) / |objective|, null without both. */
	gap: number | null;
}

interface Measure {
	size: string;
	mode: Mode;
	timeLimit: number;
	/** Null, as the other figures, when the case's process died. */
	buildMs: number | null;
	/** Total less build; null when the engine gave no result. */
	solveMs: number | null;
	totalMs: number | null;
	/** When the engine had its first award (the methods that report progress), else when it returned one. */
	firstAwardMs: number | null;
	peakRssMb: number | null;
	status: string;
	/** Why the engine gave no result (it refused the model, a solver thread failed, the process died). */
	message?: string;
	method: string | null;
	objective: number | null;
	bound: number | null;
	gap: number | null;
	integers: number | null;
	glpk: { ms: number; objective: number | null; status: string } | null;
	cbc: (Reference & { version: string | null; preprocess: 'off' | null }) | null;
}

export const problemFor = (size: string, mode: Mode) => {
	const [items, suppliers] = size.split('x').map(Number) as [number, number];
	const base = { items, suppliers, seed: 20261201, capacity: true };
	if (mode === 'lot') return generateProblem({ ...base, lots: LOTS, rules: lotBenchmarkRules(LOTS) });
	if (mode === 'event')
		return generateProblem({ ...base, smallBusinessEvery: 7, rules: eventBenchmarkRules });
	if (mode === 'fixed') {
		const problem = generateProblem(base);
		problem.rules = [fixedCostBenchmarkRule(problem)];
		return problem;
	}
	return generateProblem({ ...base, rules: mode === 'rules' ? benchmarkRules : [] });
};

/**
 * Writes the model as CPLEX LP text with names we generate (x0, r0, ...), never names from the data. The
 * text is written in pieces: with lot rules at 10000x50 it would outgrow a JavaScript string.
 */
export function writeLpFile(model: AwardModel, file: string): void {
	const fd = openSync(file, 'w');
	try {
		let pending: string[] = [];
		let pendingLength = 0;
		const flush = () => {
			writeSync(fd, pending.join(''));
			pending = [];
			pendingLength = 0;
		};
		const line = (text: string) => {
			pending.push(text, '\n');
			pendingLength += text.length + 1;
			if (pendingLength > 1 << 20) flush();
		};
		const term = (value: number, j: number) => `${value >= 0 ? '+' : '-'} ${Math.abs(value)} x${j}`;
		// The matrix by rows (the model holds it by columns), each row's terms in column order.
		const entries = model.indices.length;
		const rowStart = new Int32Array(model.numRows + 1);
		for (let k = 0; k < entries; k++) rowStart[model.indices[k]! + 1] = rowStart[model.indices[k]! + 1]! + 1;
		for (let r = 0; r < model.numRows; r++) rowStart[r + 1] = rowStart[r + 1]! + rowStart[r]!;
		const fill = rowStart.slice(0, model.numRows);
		const rowColumn = new Int32Array(entries);
		const rowValue = new Float64Array(entries);
		for (let j = 0; j < model.numCols; j++)
			for (let k = model.starts[j]!; k < model.starts[j + 1]!; k++) {
				const r = model.indices[k]!;
				rowColumn[fill[r]!] = j;
				rowValue[fill[r]!] = model.values[k]!;
				fill[r] = fill[r]! + 1;
			}
		line('Minimize');
		line(` obj: ${Array.from(model.colCost, (c, j) => term(c, j)).join(' ')}`);
		line('Subject To');
		for (let r = 0; r < model.numRows; r++) {
			if (rowStart[r] === rowStart[r + 1]) continue;
			const terms: string[] = [];
			for (let k = rowStart[r]!; k < rowStart[r + 1]!; k++) terms.push(term(rowValue[k]!, rowColumn[k]!));
			const lhs = terms.join(' ');
			const lower = model.rowLower[r]!;
			const upper = model.rowUpper[r]!;
			if (lower === upper) line(` r${r}: ${lhs} = ${lower}`);
			else {
				if (Number.isFinite(lower)) line(` r${r}l: ${lhs} >= ${lower}`);
				if (Number.isFinite(upper)) line(` r${r}u: ${lhs} <= ${upper}`);
			}
		}
		line('Bounds');
		for (let j = 0; j < model.numCols; j++) {
			const upper = model.colUpper[j]!;
			line(` ${model.colLower[j]} <= x${j} <= ${Number.isFinite(upper) ? upper : '+inf'}`);
		}
		const integers = Array.from(model.integrality, (v, j) => (v ? `x${j}` : '')).filter(Boolean);
		if (integers.length) {
			line('General');
			line(` ${integers.join(' ')}`);
		}
		line('End');
		flush();
	} finally {
		closeSync(fd);
	}
}

const relativeGap = (objective: number | null, bound: number | null) =>
	objective === null || bound === null
		? null
		: Math.abs(objective - bound) / Math.max(Math.abs(objective), 1e-9);

/** A number CBC printed, or null where it printed none or 1e+50 (its "no solution yet"). */
function cbcNumber(text: string | undefined): number | null {
	const value = Number(text);
	return text === undefined || !Number.isFinite(value) || Math.abs(value) >= 1e50 ? null : value;
}

/**
 * Reads CBC 2.10's printed answer. A MIP ends with "Result - <status>", then "Objective value:" when it
 * has a solution and "Lower bound:" when it stopped short of proving optimality (a time limit, or the gap
 * asked for). An exhausted search prints no bound: its bound is then its objective. An LP (no integers)
 * prints "Optimal - objective value X" instead, and an infeasibility found before the search "Problem is
 * infeasible". When CBC was stopped before its summary, the last integer solution and "best possible"
 * in what it had printed are taken (its CBC_ROUNDING and CBC_STATUS messages, CbcMessage.cpp).
 */
export function readCbcOutput(stdout: string): Omit<Reference, 'ms'> {
	const result = /^Result - (.+)$/m.exec(stdout)?.[1]?.trim();
	if (result) {
		const objective = cbcNumber(/^Objective value:\s+(\S+)/m.exec(stdout)?.[1]);
		const exhausted = result === 'Optimal solution found';
		const bound = cbcNumber(/^Lower bound:\s+(\S+)/m.exec(stdout)?.[1]) ?? (exhausted ? objective : null);
		const none = /^No feasible solution found/m.test(stdout) ? ' (no feasible solution)' : '';
		return { status: result + none, objective, bound, gap: relativeGap(objective, bound) };
	}
	if (/^Problem is infeasible/m.test(stdout))
		return { status: 'Problem is infeasible', objective: null, bound: null, gap: null };
	const lp = /^(Optimal|Infeasible|Unbounded|Stopped)\b.*$/m.exec(stdout);
	if (lp) {
		// Clp's own closing line carries more digits than CBC's "Optimal - objective value".
		const objective =
			lp[1] === 'Optimal'
				? cbcNumber((/^Optimal objective (\S+)/m.exec(stdout) ?? /objective value\s+(\S+)/i.exec(lp[0]))?.[1])
				: null;
		return { status: lp[1]!, objective, bound: objective, gap: objective === null ? null : 0 };
	}
	let objective: number | null = null;
	let bound: number | null = null;
	for (const line of stdout.matchAll(
		/Integer solution of (\S+) found|(\S+) best solution, best possible (\S+)/g
	)) {
		objective = cbcNumber(line[1] ?? line[2]) ?? objective;
		if (line[3] !== undefined) bound = cbcNumber(line[3]) ?? bound;
	}
	return { status: 'no summary', objective, bound, gap: relativeGap(objective, bound) };
}

/** How long past its own time limit CBC may run before it is stopped (reading a big LP file takes a while). */
const CBC_GRACE_SECONDS = 80;

function runCbc(model: AwardModel, timeLimit: number): NonNullable<Measure['cbc']> {
	const preprocess = model.integers > 0 ? 'off' : null;
	if (spawnSync('which', ['cbc']).status !== 0)
		return {
			status: 'not installed',
			version: null,
			preprocess,
			ms: null,
			objective: null,
			bound: null,
			gap: null
		};
	const folder = mkdtempSync(join(tmpdir(), 'bench-cbc-'));
	try {
		const file = join(folder, 'award.lp');
		writeLpFile(model, file);
		// With its default preprocessing CBC 2.10 returned an "optimum" 0.13% too high on a 60-item case with
		// every rule kind; without it, CBC and HiGHS agreed on the true optimum (checked by fixing the
		// integers and solving the LP). Its limit in wall-clock seconds, as HiGHS's.
		const args = [file, 'timeMode', 'elapsed', 'sec', String(timeLimit), 'ratio', '0.0001'];
		if (preprocess) args.push('preprocess', 'off');
		args.push('solve', 'quit');
		const began = performance.now();
		const result = spawnSync('cbc', args, {
			encoding: 'utf8',
			timeout: (timeLimit + CBC_GRACE_SECONDS) * 1000,
			maxBuffer: 64 * 1024 * 1024
		});
		const ms = performance.now() - began;
		const read = readCbcOutput(result.stdout ?? '');
		const status = result.signal && read.status === 'no summary' ? `killed (${result.signal})` : read.status;
		const version = /^Version:\s*(\S+)/m.exec(result.stdout ?? '')?.[1] ?? null;
		return { ...read, status, version, preprocess, ms };
	} finally {
		rmSync(folder, { recursive: true, force: true });
	}
}

async function runGlpk(model: AwardModel, timeLimit: number): Promise<Measure['glpk']> {
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
		{ msglev: glpk.GLP_MSG_OFF, tmlim: timeLimit, mipgap: 1e-4 }
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

async function measureOne(size: string, mode: Mode, args: BenchArgs): Promise<Measure> {
	const problem = problemFor(size, mode);
	const options = { timeLimit: args.timeLimit, gap: 1e-4 };
	const pool = new SolverPool();
	try {
		// Warm up as a running server is warm: every worker has solved (the first HiGHS solve in a thread
		// is slower) and the engine's own code has run once end to end on a smaller event. The modes with
		// rules that link items warm up on the item rules: their own rules can take the whole time limit
		// even at 500x20.
		const warm = buildModel(generateProblem({ items: 20, suppliers: 4, seed: 1, bidShare: 1 }));
		await Promise.all(Array.from({ length: pool.size }, () => pool.solve(warm, {})));
		await solveAward(problemFor('500x20', mode === 'lp' ? 'lp' : 'rules'), pool, options);
		const began = performance.now();
		let firstAwardMs: number | null = null;
		const onProgress = ({ objective }: { objective: number | null }) => {
			if (objective !== null && firstAwardMs === null) firstAwardMs = performance.now() - began;
		};
		// A refused model (too large for the solver's memory) or a failed solver thread is a result too.
		const outcome = await solveAward(problem, pool, { ...options, onProgress }).then(
			(result) => ({ result, error: null }),
			(error: Error) => ({ result: null, error })
		);
		const totalMs = performance.now() - began;
		// Peak memory of the engine's own work, read before the extra builds below.
		const peakRssMb = process.resourceUsage().maxRSS / 1024;
		const result = outcome.result;
		// The build column times the model the engine built (for lp_guided, its LP without the
		// integer-only rules); solve = total - build. The references get the full model.
		const integerOnly = new Set(
			problem.rules.flatMap((r, k) =>
				r.type === 'min_award' || r.type === 'supplier_count' || r.type === 'award_fixed_cost' ? [k] : []
			)
		);
		const buildBegan = performance.now();
		buildModel(problem, result?.method === 'lp_guided' ? { withoutRules: integerOnly } : {});
		const buildMs = performance.now() - buildBegan;
		const model = buildModel(problem);
		return {
			size,
			mode,
			timeLimit: args.timeLimit,
			buildMs,
			solveMs: result ? totalMs - buildMs : null,
			totalMs,
			firstAwardMs: firstAwardMs ?? (result && result.totalCost !== null ? totalMs : null),
			peakRssMb,
			status: result?.status ?? (outcome.error?.name === 'ModelTooLarge' ? 'refused' : 'error'),
			...(outcome.error ? { message: outcome.error.message } : {}),
			method: result?.method ?? null,
			objective: result?.totalCost ?? null,
			bound: result?.bound ?? null,
			gap: result?.gap ?? null,
			integers: model.integers,
			glpk:
				args.skipReferences || args.skipGlpk || (mode !== 'lp' && mode !== 'rules')
					? null
					: await runGlpk(model, args.timeLimit),
			cbc: args.skipReferences ? null : runCbc(model, args.timeLimit)
		};
	} finally {
		await pool.close();
	}
}

const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)]!;

function childMeasure(size: string, mode: Mode, args: BenchArgs): Measure {
	const flags = ['--one', '--size', size, '--mode', mode, '--time-limit', String(args.timeLimit)];
	if (args.skipReferences) flags.push('--skip-references');
	if (args.skipGlpk) flags.push('--skip-glpk');
	const child = spawnSync(process.execPath, ['--import', 'tsx', fileURLToPath(import.meta.url), ...flags], {
		encoding: 'utf8',
		maxBuffer: 16 * 1024 * 1024
	});
	if (child.status === 0) return JSON.parse(child.stdout.trim().split('\n').at(-1)!) as Measure;
	// A case whose process died (out of memory, say) is a result too; the run goes on to the next.
	const lines = (child.stderr ?? '').split('\n').filter((l) => l.trim());
	const reason = lines.find((l) => /error/i.test(l)) ?? lines.at(-1) ?? '';
	return {
		size,
		mode,
		timeLimit: args.timeLimit,
		buildMs: null,
		solveMs: null,
		totalMs: null,
		firstAwardMs: null,
		peakRssMb: null,
		status: 'crashed',
		message: `the process ended with ${child.signal ?? `exit code ${child.status}`}: ${reason.trim()}`,
		method: null,
		objective: null,
		bound: null,
		gap: null,
		integers: null,
		glpk: null,
		cbc: null
	};
}

const fixed = (n: number | null | undefined, digits = 0) =>
	n === null || n === undefined ? '-' : n.toFixed(digits);
const exponent = (n: number | null | undefined) => (n === null || n === undefined ? '-' : n.toExponential(1));

export function benchTable(results: Measure[]): string {
	const lines = [
		'| size | mode | status | method | build ms | solve ms | total ms | first award ms | peak RSS MB | objective | bound | gap | glpk.js ms | glpk.js objective | CBC status | CBC ms | CBC objective | CBC bound | CBC gap |',
		'|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|---|'
	];
	for (const r of results) {
		const glpk = r.glpk ? (r.glpk.objective === null ? r.glpk.status : r.glpk.objective.toFixed(2)) : '-';
		lines.push(
			`| ${r.size} | ${r.mode} | ${r.status} | ${r.method ?? '-'} | ${fixed(r.buildMs)} | ${fixed(r.solveMs)} | ${fixed(r.totalMs)} | ${fixed(r.firstAwardMs)} | ${fixed(r.peakRssMb)} | ${fixed(r.objective, 2)} | ${fixed(r.bound, 2)} | ${exponent(r.gap)} | ${fixed(r.glpk?.ms)} | ${glpk} | ${r.cbc?.status ?? (r.status === 'crashed' ? '-' : 'skipped')} | ${fixed(r.cbc?.ms)} | ${fixed(r.cbc?.objective, 2)} | ${fixed(r.cbc?.bound, 2)} | ${exponent(r.cbc?.gap)} |`
		);
	}
	const notes = results.filter((r) => r.message).map((r) => `- ${r.size} ${r.mode}: ${r.message}`);
	const version = results.find((r) => r.cbc?.version)?.cbc?.version;
	return [
		...lines,
		...(notes.length ? ['', ...notes] : []),
		...(version ? ['', `CBC ${version}, "preprocess off" on models with integers.`] : [])
	].join('\n');
}

async function main(argv: string[]): Promise<number> {
	let args: BenchArgs;
	try {
		args = readBenchArgs(argv);
	} catch (error) {
		process.stderr.write(`bench:award: ${(error as Error).message}\nRun with --help for the options.\n`);
		return 2;
	}
	if (args.help) {
		process.stdout.write(USAGE);
		return 0;
	}
	if (args.one) {
		const { size, mode } = args.cases[0]!;
		console.log(JSON.stringify(await measureOne(size, mode, args)));
		return 0;
	}
	const results: Measure[] = [];
	for (const { size, mode } of args.cases) {
		const runs = Array.from({ length: args.repeat }, () => childMeasure(size, mode, args));
		const pick =
			runs.find((r) => r.totalMs === null) ??
			runs.find((r) => r.totalMs === median(runs.map((x) => x.totalMs!)))!;
		results.push(pick);
		if (!args.json)
			process.stderr.write(
				`${size} ${mode}: ${pick.totalMs === null ? pick.status : `${Math.round(pick.totalMs)} ms`}\n`
			);
	}
	if (args.json) console.log(JSON.stringify(results, null, 2));
	else console.log(benchTable(results));
	if (args.defaults) {
		mkdirSync('bench-results', { recursive: true });
		const file = join('bench-results', `award-${new Date().toISOString().slice(0, 10)}.json`);
		writeFileSync(file, JSON.stringify(results, null, 2));
		if (!args.json) console.log(`\nwritten to ${file}`);
	}
	return 0;
}

// Run only as a script: the spec imports the functions above.
if (process.argv[1] && resolve(process.argv[1]) === fileURLToPath(import.meta.url))
	process.exitCode = await main(process.argv.slice(2));
