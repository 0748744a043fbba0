// Two finished runs of one event stored as a worker stores them, allocating differently: what the tests of
// the compare page start from. Run 1 gives each item to one supplier; run 2, under a 60% cap, splits each.
import { aStoredRun } from './events';

export interface StoredLine {
	supplier: string;
	item: string;
	quantity: number;
	unitPrice: number;
	cost: number;
}

const line = (supplier: string, item: string, quantity: number, unitPrice: number): StoredLine => ({
	supplier,
	item,
	quantity,
	unitPrice,
	cost: quantity * unitPrice
});

function result(awards: StoredLine[], baseline: number) {
	const total = awards.reduce((sum, l) => sum + l.cost, 0);
	return {
		status: 'optimal',
		method: 'mip',
		currency: 'EUR',
		totalCost: total,
		baselineCost: baseline,
		savings: baseline - total,
		bound: total,
		gap: 0,
		awards,
		supplierTotals: [],
		uncoveredItems: [],
		solveSeconds: 0.1,
		modelSize: { rows: 1, columns: 1, integers: 0 },
		violations: []
	};
}
export type StoredResult = ReturnType<typeof result>;

export const comparedProblem = (rules: unknown[]) => ({
	currency: 'EUR',
	items: [
		{ ref: 'IT-1', quantity: 1000, lot: 'L1', unit: 'C62' },
		{ ref: 'IT-2', quantity: 2000, lot: 'L1', unit: 'C62' },
		{ ref: 'IT-3', quantity: 3000, unit: 'KGM' }
	],
	suppliers: [{ ref: 'S1' }, { ref: 'S2' }],
	bids: [],
	bundles: [],
	rules
});

export const LOWEST = result(
	[line('S1', 'IT-1', 1000, 4.25), line('S1', 'IT-2', 2000, 3.1), line('S2', 'IT-3', 3000, 1.5)],
	17000
);
export const CAPPED = result(
	[
		line('S1', 'IT-1', 600, 4.25),
		line('S2', 'IT-1', 400, 4.5),
		line('S1', 'IT-2', 1200, 3.1),
		line('S2', 'IT-2', 800, 3.3),
		line('S1', 'IT-3', 1200, 1.75),
		line('S2', 'IT-3', 1800, 1.5)
	],
	17000
);

/** The finished-run columns of a stored run with this result. */
export const finishedRun = (number: number, stored: StoredResult) => ({
	number,
	status: 'done',
	result: JSON.stringify(stored),
	started_at: new Date(),
	finished_at: new Date(),
	explanation_status: 'not_needed'
});

/** Stores run 1 (LOWEST, no rules) and run 2 (CAPPED, a 60% cap) on the event; returns their ids. */
export async function twoComparedRuns(eventId: string, createdBy: number): Promise<[string, string]> {
	const first = await aStoredRun({
		eventId,
		createdBy,
		problem: comparedProblem([]),
		fields: finishedRun(1, LOWEST)
	});
	const second = await aStoredRun({
		eventId,
		createdBy,
		problem: comparedProblem([{ type: 'max_share', scope: 'each_item', who: 'each_supplier', percent: 60 }]),
		fields: finishedRun(2, CAPPED)
	});
	return [first.id, second.id];
}
