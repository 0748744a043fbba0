// The award benchmark's command line and its reading of CBC's output. The CBC outputs below are CBC
// 2.10.8's own (Debian coinor-cbc 2.10.8+ds1-1, run with this bench's arguments on its seeded models),
// trimmed to the lines around the ones read; only the progress lines of one test are made up.
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { buildModel } from '../core/model';
import { DEFAULT_SIZES, MODES, problemFor, readBenchArgs, readCbcOutput, writeLpFile } from './bench';
import { fixedCostBenchmarkRule, generateProblem } from './generate';

// lot mode, 200x10 (preprocess off): the search ended at the root node.
const exhausted = `Cbc0001I Search completed - best objective 3321321.538000001, took 595 iterations and 0 nodes (0.59 seconds)
Cbc0035I Maximum depth 0, 0 variables fixed on reduced cost

Result - Optimal solution found

Objective value:                3321321.53800000
Enumerated nodes:               0
Total iterations:               595
Time (CPU seconds):             0.37
Time (Wallclock seconds):       0.60
`;

// fixed mode, 1000x20, ratio 0.0001: stopped at the gap asked for.
const withinGap = `Cbc0011I Exiting as integer gap of 710.80038 less than 1e-10 or 0.01%
Cbc0001I Search completed - best objective 17266718.51, took 0 iterations and 0 nodes (4.87 seconds)

Result - Optimal solution found (within gap tolerance)

Objective value:                17266718.51000000
Lower bound:                    17266007.710
Gap:                            0.00
Enumerated nodes:               0
`;

// event mode, 1000x20, sec 5: no award within the limit.
const noSolution = `Cbc0005I Partial search - best objective 1e+50 (best possible 17070351), took 0 iterations and 0 nodes (5.19 seconds)

Result - Stopped on time limit

No feasible solution found
Lower bound:                    17070350.917
Enumerated nodes:               0
`;

// lp mode, 200x10: no integers, so Clp's answer.
const lp = `Presolve 209 (-1) rows, 1376 (-1) columns and 2752 (-2) elements
199  Obj 3248271.2
Optimal - objective value 3248271.2
After Postsolve, objective 3248271.2, infeasibilities - dual 0 (0), primal 0 (0)
Optimal objective 3248271.19 - 199 iterations time 0.002, Presolve 0.00
Total time (CPU seconds):       0.00   (Wallclock seconds):       0.01
`;

// event mode, 60x6: an item with one bidder cannot keep the 60% cap.
const infeasible = `Option for preprocess changed from sos to off
Problem is infeasible - 0.00 seconds
Total time (CPU seconds):       0.00   (Wallclock seconds):       0.01
`;

// fixed mode, 1000x20, ratio 0: cut off after its second integer solution, as a kill leaves it.
const cutOff = `Cbc0038I After 4.54 seconds - Feasibility pump exiting with objective of 1.72667e+07 - took 3.72 seconds
Cbc0012I Integer solution of 17266719 found by feasibility pump after 0 iterations and 0 nodes (4.56 seconds)
Cbc0038I Full problem 43007 rows 27998 columns, reduced to 849 rows 614 columns
Cbc0012I Integer solution of 17266692 found by DiveCoefficient after 507 iterations and 0 nodes (5.38 seconds)
`;

describe("reading CBC's output", () => {
	it('takes an exhausted search as its own bound', () => {
		expect(readCbcOutput(exhausted)).toEqual({
			status: 'Optimal solution found',
			objective: 3321321.538,
			bound: 3321321.538,
			gap: 0
		});
	});

	it('reads the lower bound of a search stopped at the gap asked for and computes the gap from it', () => {
		const read = readCbcOutput(withinGap);
		expect(read).toMatchObject({
			status: 'Optimal solution found (within gap tolerance)',
			objective: 17266718.51,
			bound: 17266007.71
		});
		expect(read.gap).toBeCloseTo(710.8 / 17266718.51, 12);
	});

	it('reports a stop on the time limit with no award and its bound', () => {
		expect(readCbcOutput(noSolution)).toEqual({
			status: 'Stopped on time limit (no feasible solution)',
			objective: null,
			bound: 17070350.917,
			gap: null
		});
	});

	it("reads an LP's objective from Clp's closing line, the more precise one", () => {
		expect(readCbcOutput(lp)).toEqual({
			status: 'Optimal',
			objective: 3248271.19,
			bound: 3248271.19,
			gap: 0
		});
	});

	it('reports infeasibility found before the search', () => {
		expect(readCbcOutput(infeasible)).toMatchObject({ status: 'Problem is infeasible', objective: null });
	});

	it('takes the last integer solution from output cut off before the summary', () => {
		expect(readCbcOutput(cutOff)).toEqual({
			status: 'no summary',
			objective: 17266692,
			bound: null,
			gap: null
		});
	});

	it('takes the last award and bound from a progress line, where 1e+50 means none yet', () => {
		// Lines in the format of CBC_STATUS (CbcMessage.cpp), figures made up: the short runs above branched none.
		const progress = [
			'Cbc0010I After 0 nodes, 1 on tree, 1e+50 best solution, best possible 17070351 (5.10 seconds)',
			'Cbc0010I After 100 nodes, 40 on tree, 17300000 best solution, best possible 17080000 (9.00 seconds)'
		];
		expect(readCbcOutput(progress[0]!)).toMatchObject({ objective: null, bound: 17070351 });
		expect(readCbcOutput(progress.join('\n'))).toMatchObject({ objective: 17300000, bound: 17080000 });
	});
});

describe('the command line', () => {
	it('runs lp and rules over the four sizes, size by size, when no mode is given', () => {
		const args = readBenchArgs([]);
		expect(args.cases.map((c) => `${c.size} ${c.mode}`)).toEqual([
			'200x10 lp',
			'200x10 rules',
			'1000x20 lp',
			'1000x20 rules',
			'5000x40 lp',
			'5000x40 rules',
			'10000x50 lp',
			'10000x50 rules'
		]);
		expect(args).toMatchObject({ defaults: true, timeLimit: 120 });
	});

	it('runs the linking modes at their own sizes', () => {
		expect(readBenchArgs(['--mode', 'lot,fixed']).cases.map((c) => `${c.size} ${c.mode}`)).toEqual([
			'2000x30 lot',
			'2000x30 fixed',
			'5000x40 lot',
			'5000x40 fixed',
			'10000x50 lot',
			'10000x50 fixed'
		]);
		expect(readBenchArgs(['--mode', 'all']).cases).toHaveLength(
			MODES.reduce((n, m) => n + DEFAULT_SIZES[m].length, 0)
		);
	});

	it('runs a given size in every mode asked for, with the time limit given', () => {
		const args = readBenchArgs(['--size', '200x10', '--mode', 'event', '--time-limit', '10']);
		expect(args).toMatchObject({
			cases: [{ size: '200x10', mode: 'event' }],
			timeLimit: 10,
			defaults: false
		});
	});

	it.each([
		[['--mode', 'lots'], /unknown mode "lots"/],
		[['--mode', 'lp,'], /unknown mode ""/],
		[['--size', '200by10'], /"200by10"/],
		[['--size', '0x10'], /"0x10"/],
		[['--time-limit', 'soon'], /"soon"/],
		[['--repeat', '1.5'], /"1.5"/],
		[['--sizes', '200x10'], /--sizes/]
	])('refuses %j naming the bad value', (argv, message) => {
		expect(() => readBenchArgs(argv)).toThrow(message);
	});
});

// Each case starts a Node process under tsx: seconds on a loaded 2-core machine.
describe('the bench as a script', { timeout: 30_000 }, () => {
	const run = (...argv: string[]) =>
		spawnSync(process.execPath, ['--import', 'tsx', 'src/lib/award/tools/bench.ts', ...argv], {
			encoding: 'utf8'
		});

	it('prints its usage with every option and mode on --help and exits 0', () => {
		const result = run('--help');
		expect(result.status).toBe(0);
		for (const word of [
			...MODES.map((m) => `\n  ${m} `),
			'--size',
			'--mode',
			'--time-limit',
			'--repeat',
			'--json',
			'--skip-references',
			'--skip-glpk',
			'--help'
		])
			expect(result.stdout).toContain(word);
	});

	it('exits 2 on an unknown mode, naming it, and solves nothing', () => {
		const result = run('--mode', 'lots');
		expect(result.status).toBe(2);
		expect(result.stderr).toContain('unknown mode "lots"');
		expect(result.stdout).toBe('');
	});
});

describe('the LP file CBC reads', () => {
	it('holds every entry, row bound, column bound and integer of the model', () => {
		const model = buildModel(problemFor('30x5', 'lot'));
		const file = join(mkdtempSync(join(tmpdir(), 'bench-lp-')), 'award.lp');
		writeLpFile(model, file);
		const text = readFileSync(file, 'utf8');
		const written = new Map<string, number>();
		const rowBounds = new Map<number, [number, number]>();
		for (const [, r, sense, rhs] of text.matchAll(/^ r(\d+)\w?: .* (=|>=|<=) (\S+)$/gm)) {
			const bounds = rowBounds.get(Number(r)) ?? [-Infinity, Infinity];
			if (sense !== '<=') bounds[0] = Number(rhs);
			if (sense !== '>=') bounds[1] = Number(rhs);
			rowBounds.set(Number(r), bounds);
		}
		for (const [, r, terms] of text.matchAll(/^ r(\d+)[lu]?: (.*) (?:=|>=|<=) \S+$/gm))
			for (const [, sign, value, j] of terms!.matchAll(/([+-]) (\S+) x(\d+)/g))
				written.set(`${r} ${j}`, (sign === '-' ? -1 : 1) * Number(value));
		const entries = new Map<string, number>();
		for (let j = 0; j < model.numCols; j++)
			for (let k = model.starts[j]!; k < model.starts[j + 1]!; k++)
				entries.set(`${model.indices[k]} ${j}`, model.values[k]!);
		expect(written).toEqual(entries);
		for (const [r, [lower, upper]] of rowBounds) {
			expect(lower).toBe(model.rowLower[r]);
			expect(upper).toBe(model.rowUpper[r]);
		}
		expect(text.match(/^ \S+ <= x\d+ <= \S+$/gm)).toHaveLength(model.numCols);
		expect(text.split('\nGeneral\n')[1]!.split('\n')[0]!.trim().split(' ')).toHaveLength(model.integers);
	});
});

describe('the benchmark problems', () => {
	it('tag one supplier in three as small businesses unless asked otherwise', () => {
		const tagged = (every?: number) =>
			generateProblem({ items: 3, suppliers: 15, seed: 1, smallBusinessEvery: every })
				.suppliers.filter((s) => s.tags?.includes('small_business'))
				.map((s) => s.ref);
		expect(tagged()).toEqual(['S1', 'S4', 'S7', 'S10', 'S13']);
		expect(tagged(7)).toEqual(['S1', 'S8', 'S15']);
	});

	it("charge 2% of an average supplier's share of the baseline spend per supplier awarded", () => {
		const problem = {
			currency: 'EUR',
			items: [
				{ ref: 'IT-1', quantity: 100, baselineUnitPrice: 10 },
				{ ref: 'IT-2', quantity: 50, baselineUnitPrice: 4 }
			],
			suppliers: [{ ref: 'S1' }, { ref: 'S2' }],
			bids: [],
			bundles: [],
			rules: []
		};
		// (100·10 + 50·4) / 2 suppliers = 600; 2% of it is 12.
		expect(fixedCostBenchmarkRule(problem)).toMatchObject({
			type: 'award_fixed_cost',
			amount: 12,
			per: 'supplier'
		});
	});
});
