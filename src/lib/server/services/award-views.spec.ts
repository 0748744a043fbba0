import { describe, expect, it } from 'vitest';
import type { AwardResult } from '$lib/award/core/engine';
import type { RunRow } from '../db/tables';
import type { AwardProblem } from '$lib/award/core/problem';
import { ownEvaluatedTotal, ownLines, runJson } from './award-views';

const result = {
	status: 'optimal',
	method: 'mip',
	currency: 'EUR',
	totalCost: 30,
	baselineCost: null,
	savings: null,
	bound: 30,
	gap: 0,
	awards: [
		{ supplier: 'A', item: 'IT-1', quantity: 10, unitPrice: 1, cost: 10 },
		{ supplier: 'B', item: 'IT-2', quantity: 10, unitPrice: 2, cost: 20 },
		{ supplier: 'A', item: 'IT-3', quantity: 0, unitPrice: 3, cost: 0 }
	],
	supplierTotals: [],
	uncoveredItems: [],
	solveSeconds: 0.1,
	modelSize: { rows: 1, columns: 1, integers: 0 },
	violations: []
} as AwardResult;

const run = (over: Partial<RunRow> = {}): RunRow =>
	({
		id: 'run-1',
		event_id: 'event-1',
		plan_id: 'plan-1',
		number: 1,
		plan_name: 'Lowest cost (no rules)',
		status: 'done',
		cancel_requested: false,
		problem: { currency: 'EUR', items: [], suppliers: [], bids: [], bundles: [], rules: [] },
		problem_sha256: 'a'.repeat(64),
		result,
		result_sha256: 'b'.repeat(64),
		solver_version: 'HiGHS',
		options: {},
		error: null,
		attempts: 1,
		created_by: 1,
		queued_at: new Date(Date.now() - 60_000),
		started_at: new Date(Date.now() - 50_000),
		finished_at: new Date(Date.now() - 40_000),
		heartbeat_at: null,
		explanation: null,
		explanation_status: 'done',
		explanation_error: null,
		...over
	}) as RunRow;

describe('a run as the pages and the API see it (runJson)', () => {
	it('merges the explanation, worked out later, into the result', () => {
		const ruleCosts = [
			{
				rule: 0,
				label: 'r',
				cost: 5,
				costOnTopOfEarlier: 5,
				runningTotal: 5,
				tolerance: 1e-6,
				statusWithout: 'optimal'
			}
		];
		const json = runJson(run({ explanation: { ruleCosts } as never }));
		expect(json.result?.ruleCosts).toEqual(ruleCosts);
		expect(json.result?.totalCost).toBe(30);
	});

	it("reads rule costs stored before the running total (cumulativeCost) in today's shape", () => {
		const stored = [
			{ rule: 0, label: 'a', cost: 5, cumulativeCost: 4, statusWithout: 'optimal' },
			{ rule: 1, label: 'b', cost: 3, cumulativeCost: 2.5, statusWithout: 'optimal' }
		];
		const json = runJson(run({ explanation: { ruleCosts: stored } as never }));
		expect(json.result?.ruleCosts).toEqual([
			{
				rule: 0,
				label: 'a',
				cost: 5,
				costOnTopOfEarlier: 4,
				runningTotal: 4,
				tolerance: null,
				statusWithout: 'optimal'
			},
			{
				rule: 1,
				label: 'b',
				cost: 3,
				costOnTopOfEarlier: 2.5,
				runningTotal: 6.5,
				tolerance: null,
				statusWithout: 'optimal'
			}
		]);
	});

	it('says the explanation is done when the run predates the column, and pending while it is', () => {
		expect(runJson(run({ explanation_status: undefined as never })).explanationStatus).toBe('done');
		expect(runJson(run({ explanation_status: 'pending' })).explanationStatus).toBe('pending');
	});

	it('has no result until the run is done', () => {
		expect(runJson(run({ status: 'running', finished_at: null })).result).toBeNull();
	});

	it('tells a lost worker by a heartbeat older than 20 s, only while running', () => {
		const running = { status: 'running' as const, finished_at: null, result: null };
		expect(runJson(run({ ...running, heartbeat_at: new Date(Date.now() - 25_000) })).workerLost).toBe(true);
		expect(runJson(run({ ...running, heartbeat_at: new Date(Date.now() - 5_000) })).workerLost).toBe(false);
		expect(runJson(run({ ...running, heartbeat_at: null })).workerLost).toBe(false);
		expect(runJson(run({ heartbeat_at: new Date(Date.now() - 25_000) })).workerLost).toBe(false);
	});
});

describe('a supplier’s own award lines (ownLines)', () => {
	it('keeps its lines with a quantity, never another supplier’s', () => {
		expect(ownLines(result, 'A')).toEqual([{ item: 'IT-1', quantity: 10, unitPrice: 1, cost: 10 }]);
		expect(ownLines(result, 'C')).toEqual([]);
		expect(ownLines(null, 'A')).toEqual([]);
	});

	it('gives the supplier its own price where the run compared evaluated costs', () => {
		// A bid 1.00 on IT-1; the criteria made it 1.02 a unit (+2 %) in the problem the engine minimised, so
		// the stored line says 10 × 1.02 = 10.20. The supplier is told 1.00 and 10.00 (by hand).
		const problem = {
			bids: [{ supplier: 'A', item: 'IT-1', unitPrice: 1.02, priceBeforeCriteria: 1 }],
			bundles: [],
			rules: []
		} as unknown as AwardProblem;
		const evaluated = {
			awards: [{ supplier: 'A', item: 'IT-1', quantity: 10, unitPrice: 1.02, cost: 10.2 }]
		};
		expect(ownLines(evaluated, 'A', problem)).toEqual([
			{ item: 'IT-1', quantity: 10, unitPrice: 1, cost: 10 }
		]);
		expect(ownEvaluatedTotal(problem, evaluated, 'A')).toBeCloseTo(10.2, 9);
		// Without criteria money the stored line is the price, and there is no evaluated total.
		const plain = {
			...problem,
			bids: [{ supplier: 'A', item: 'IT-1', unitPrice: 1 }]
		} as unknown as AwardProblem;
		expect(ownLines(result, 'A', plain)).toEqual([{ item: 'IT-1', quantity: 10, unitPrice: 1, cost: 10 }]);
		expect(ownEvaluatedTotal(plain, result, 'A')).toBeNull();
	});
});
