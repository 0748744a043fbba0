// The engine and the runner against published LP and transportation examples. Each check value names
// its source beside it.
import { readFileSync } from 'node:fs';
import { afterAll, describe, expect, it } from 'vitest';
import { solveAward } from './engine';
import { loadHighs } from '../runtime/highs-instance';
import type { AwardModel } from './model';
import { SolverPool } from '../runtime/pool';
import { dantzig } from '../tools/published-examples';
import { parseProblem, type AwardProblem } from './problem';

const pool = new SolverPool({ size: 2 });
afterAll(() => pool.close());

const relative = (actual: number, expected: number) => Math.abs(actual - expected) / Math.abs(expected);

function problemOf(input: unknown): AwardProblem {
	const parsed = parseProblem(input);
	if (!parsed.ok) throw new Error(parsed.problems.join('\n'));
	return parsed.problem;
}

/** A plain LP (rows l <= Ax <= u, columns l <= x <= u, minimise c'x) in the runner's array form. */
function plainModel(lp: {
	cost: number[];
	colLower: number[];
	colUpper: number[];
	rows: { lower: number; upper: number; terms: [number, number][] }[];
}): AwardModel {
	const numCols = lp.cost.length;
	const byColumn: [number, number][][] = Array.from({ length: numCols }, () => []);
	lp.rows.forEach((row, r) => row.terms.forEach(([column, value]) => byColumn[column]!.push([r, value])));
	const starts = [0];
	for (const entries of byColumn) starts.push(starts.at(-1)! + entries.length);
	return {
		numCols,
		numRows: lp.rows.length,
		colCost: Float64Array.from(lp.cost),
		colLower: Float64Array.from(lp.colLower),
		colUpper: Float64Array.from(lp.colUpper),
		integrality: new Int32Array(numCols),
		rowLower: Float64Array.from(lp.rows.map((r) => r.lower)),
		rowUpper: Float64Array.from(lp.rows.map((r) => r.upper)),
		starts: Int32Array.from(starts),
		indices: Int32Array.from(byColumn.flatMap((e) => e.map(([r]) => r))),
		values: Float64Array.from(byColumn.flatMap((e) => e.map(([, v]) => v))),
		columns: [],
		rows: [],
		integers: 0,
		uncovered: [],
		elastic: false
	};
}

describe('published examples', () => {
	it('solves the Dantzig (1963, sec. 3.3) transport example through the award engine to 153.675', async () => {
		const result = await solveAward(problemOf(dantzig), pool);
		expect(result.status).toBe('optimal');
		expect(result.method).toBe('lp');
		expect(relative(result.totalCost!, 153.675)).toBeLessThan(1e-6); // Dantzig 1963, sec. 3.3
		expect(result.violations).toEqual([]);
	});

	it('solves the Hillier and Lieberman glass-factory product mix through the runner: Z = 36 at (2, 6)', async () => {
		// Hillier & Lieberman, Introduction to Operations Research: max 3x1 + 5x2, x1 <= 4, 2x2 <= 12,
		// 3x1 + 2x2 <= 18; optimum (2, 6), Z = 36, duals (0, 1.5, 1) [answer from memory, recomputed]
		const outcome = await pool.solve(
			plainModel({
				cost: [-3, -5],
				colLower: [0, 0],
				colUpper: [Infinity, Infinity],
				rows: [
					{ lower: -Infinity, upper: 4, terms: [[0, 1]] },
					{ lower: -Infinity, upper: 12, terms: [[1, 2]] },
					{
						lower: -Infinity,
						upper: 18,
						terms: [
							[0, 3],
							[1, 2]
						]
					}
				]
			}),
			{}
		);
		expect(outcome.status).toBe('optimal');
		expect(relative(-outcome.objective!, 36)).toBeLessThan(1e-6);
		expect([...outcome.columns!].map((v) => Math.round(v * 1e6) / 1e6)).toEqual([2, 6]);
		// minimising -Z flips the duals' sign
		expect([...outcome.rowDuals!].map((v) => -Math.round(v * 1e6) / 1e6 + 0)).toEqual([0, 1.5, 1]);
	});

	it('solves the lp_solve sensitivity example through the runner: 31.7828, first dual 0.03448276', async () => {
		// lp_solve reference guide, "Sensitivity": min x1 + 3x2 + 6.24x3 + 0.1x4; 78.26x2 + 2.9x4 >= 92.3;
		// 0.24x1 + 11.31x3 <= 14.8; 12.68x1 + 0.08x3 + 0.9x4 >= 4; x1 >= 28.6; 18 <= x4 <= 48.98
		const outcome = await pool.solve(
			plainModel({
				cost: [1, 3, 6.24, 0.1],
				colLower: [28.6, 0, 0, 18],
				colUpper: [Infinity, Infinity, Infinity, 48.98],
				rows: [
					{
						lower: 92.3,
						upper: Infinity,
						terms: [
							[1, 78.26],
							[3, 2.9]
						]
					},
					{
						lower: -Infinity,
						upper: 14.8,
						terms: [
							[0, 0.24],
							[2, 11.31]
						]
					},
					{
						lower: 4,
						upper: Infinity,
						terms: [
							[0, 12.68],
							[2, 0.08],
							[3, 0.9]
						]
					}
				]
			}),
			{}
		);
		expect(outcome.status).toBe('optimal');
		expect(Math.abs(outcome.objective! - 31.7828)).toBeLessThan(5e-5); // published to 4 decimals
		expect(Math.abs(outcome.rowDuals![0]! - 0.03448276)).toBeLessThan(5e-9); // published to 8 decimals
	});

	it('solves Netlib AFIRO through the runner to -464.75314286', async () => {
		// Netlib LP test set, AFIRO: optimal objective -4.6475314286E+02 (Netlib lp/data readme)
		const highs = await loadHighs();
		const reader = highs.createModel({
			format: 'mps',
			data: readFileSync('tests/fixtures/afiro.mps')
		} as never);
		const lp = reader.getLp('csc');
		reader.dispose();
		const model: AwardModel = {
			...plainModel({ cost: [], colLower: [], colUpper: [], rows: [] }),
			numCols: lp.numCols,
			numRows: lp.numRows,
			colCost: Float64Array.from(lp.colCost),
			colLower: Float64Array.from(lp.colLower),
			colUpper: Float64Array.from(lp.colUpper),
			integrality: new Int32Array(lp.numCols),
			rowLower: Float64Array.from(lp.rowLower),
			rowUpper: Float64Array.from(lp.rowUpper),
			starts: Int32Array.from(lp.matrix.starts),
			indices: Int32Array.from(lp.matrix.indices),
			values: Float64Array.from(lp.matrix.values)
		};
		const outcome = await pool.solve(model, {});
		expect(outcome.status).toBe('optimal');
		expect(relative(outcome.objective!, -464.75314286)).toBeLessThan(1e-8);
	});
});
