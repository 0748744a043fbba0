// The block structure of an award model, read from the model itself: each item (with the items a
// bundle joins to it) is a block of columns; columns that belong to no item (a supplier winning part of
// a lot or the event) form the global block. A row whose free columns all lie in one block is that
// block's own; every other row links blocks (capacities, lot and event shares and spend caps, lot and
// event supplier counts through the group indicators, fixed costs per supplier). The relaxation of
// linking rows (linked.ts) and the repairs work on this structure, and on models cut from the whole one
// by subModel: some columns free, the rest held at given values.
import type { AwardModel, ColumnMeaning, RowMeaning } from '../model-builder';
import type { AwardProblem } from '../problem';

export const GLOBAL = -1;
export const LINKING = -2;

export interface Blocks {
	/** Block of each column: its index, or GLOBAL. */
	blockOf: Int32Array;
	/** The items of each block, in the problem's order. */
	items: string[][];
	/** The columns of each block. */
	columnsOf: number[][];
	globalColumns: number[];
	/** Block of each row: the block its free columns lie in, GLOBAL, or LINKING. */
	rowBlock: Int32Array;
	/** The model's rows in compressed sparse rows (the model keeps columns). */
	rowStarts: Int32Array;
	rowColumns: Int32Array;
	rowValues: Float64Array;
}

/** The items a column belongs to (none for a group indicator). */
export function itemsOfColumn(problem: AwardProblem, meaning: ColumnMeaning): string[] {
	if (meaning.kind === 'tier' || meaning.kind === 'tier_used') return [problem.bids[meaning.bid]!.item];
	if (meaning.kind === 'bundle') return problem.bundles[meaning.bundle]!.items.map((l) => l.item);
	if (meaning.kind === 'wins') return [meaning.item];
	return [];
}

export function rowsOf(model: AwardModel) {
	const counts = new Int32Array(model.numRows + 1);
	for (let k = 0; k < model.indices.length; k++) counts[model.indices[k]! + 1]! += 1;
	for (let r = 0; r < model.numRows; r++) counts[r + 1]! += counts[r]!;
	const rowStarts = Int32Array.from(counts);
	const next = Int32Array.from(counts.subarray(0, model.numRows));
	const rowColumns = new Int32Array(model.indices.length);
	const rowValues = new Float64Array(model.indices.length);
	for (let j = 0; j < model.numCols; j++) {
		for (let k = model.starts[j]!; k < model.starts[j + 1]!; k++) {
			const at = next[model.indices[k]!]!++;
			rowColumns[at] = j;
			rowValues[at] = model.values[k]!;
		}
	}
	return { rowStarts, rowColumns, rowValues };
}

/** The problem's items as disjoint sets (union-find): `find` names an item's set, `union` joins two. */
export function itemSets(problem: AwardProblem) {
	const parent = new Map<string, string>();
	for (const item of problem.items) parent.set(item.ref, item.ref);
	const find = (a: string): string => {
		let root = a;
		while (parent.get(root)! !== root) root = parent.get(root)!;
		parent.set(a, root);
		return root;
	};
	const union = (a: string, b: string) => void parent.set(find(a), find(b));
	return { find, union };
}

/** The blocks of a model; columns held fixed (lower = upper) link nothing. */
export function blocksOf(problem: AwardProblem, model: AwardModel): Blocks {
	const { find, union } = itemSets(problem);
	const columnItems = model.columns.map((c) => itemsOfColumn(problem, c));
	for (const items of columnItems) for (const i of items.slice(1)) union(i, items[0]!);
	const indexOfRoot = new Map<string, number>();
	const items: string[][] = [];
	for (const item of problem.items) {
		const r = find(item.ref);
		let b = indexOfRoot.get(r);
		if (b === undefined) {
			indexOfRoot.set(r, (b = items.length));
			items.push([]);
		}
		items[b]!.push(item.ref);
	}
	const blockOf = new Int32Array(model.numCols);
	const columnsOf: number[][] = items.map(() => []);
	const globalColumns: number[] = [];
	columnItems.forEach((its, j) => {
		if (!its.length) {
			blockOf[j] = GLOBAL;
			globalColumns.push(j);
		} else {
			const b = indexOfRoot.get(find(its[0]!))!;
			blockOf[j] = b;
			columnsOf[b]!.push(j);
		}
	});
	const rows = rowsOf(model);
	const rowBlock = new Int32Array(model.numRows);
	for (let r = 0; r < model.numRows; r++) {
		let block: number | null = null;
		for (let k = rows.rowStarts[r]!; k < rows.rowStarts[r + 1]!; k++) {
			const j = rows.rowColumns[k]!;
			if (model.colLower[j] === model.colUpper[j]) continue;
			const b = blockOf[j]!;
			if (block === null) block = b;
			else if (block !== b) {
				block = LINKING;
				break;
			}
		}
		rowBlock[r] = block ?? LINKING;
	}
	return { blockOf, items, columnsOf, globalColumns, rowBlock, ...rows };
}

/** A x, row by row. */
export function rowActivities(model: AwardModel, blocks: Blocks, x: Float64Array): Float64Array {
	const activity = new Float64Array(model.numRows);
	for (let r = 0; r < model.numRows; r++) {
		let sum = 0;
		for (let k = blocks.rowStarts[r]!; k < blocks.rowStarts[r + 1]!; k++)
			sum += blocks.rowValues[k]! * x[blocks.rowColumns[k]!]!;
		activity[r] = sum;
	}
	return activity;
}

/** How far a row's activity lies outside its bounds, relative to the row's size (0 when inside). */
export function rowExcess(model: AwardModel, row: number, activity: number): number {
	const lower = model.rowLower[row]!;
	const upper = model.rowUpper[row]!;
	const over = Math.max(0, activity - upper, lower - activity);
	const scale = Math.max(1, Math.abs(Number.isFinite(upper) ? upper : lower), Math.abs(activity));
	return over / scale;
}

export interface SubModel {
	model: AwardModel;
	/** The whole model's column of each column of the cut (slack columns last, -1). */
	columns: number[];
}

export interface CutOptions {
	/** Costs to use instead of the model's (for the Lagrangian prices). */
	costs?: Float64Array;
	/** Rows to leave out (relaxed). */
	skipRow?: (row: number) => boolean;
	/** Rows that may give way, at this cost per unit: a slack column each way it is bounded. */
	elasticRow?: (row: number) => boolean;
	penalty?: number;
	/** Solve with every column continuous. */
	relaxed?: boolean;
}

/**
 * The model with only `free` columns free, every other column held at `at` (their terms move to the
 * row bounds). Rows without a free column are left out; a row with one free column becomes that
 * column's bounds when it cannot give way, and when it can, only the tightest such row each way is kept.
 */
export function subModel(
	model: AwardModel,
	blocks: Blocks,
	free: readonly number[],
	at: Float64Array,
	options: CutOptions = {}
): SubModel {
	const position = new Map<number, number>();
	free.forEach((j, k) => position.set(j, k));
	const lower = free.map((j) => model.colLower[j]!);
	const upper = free.map((j) => model.colUpper[j]!);
	const touched = new Set<number>();
	for (const j of free)
		for (let k = model.starts[j]!; k < model.starts[j + 1]!; k++) touched.add(model.indices[k]!);
	const rowList: { row: number; lower: number; upper: number; terms: [number, number][] }[] = [];
	// Rows on one free column that may give way: only the tightest each way is kept, as a row of its
	// own. The rows "s wins part of i => s wins part of the event" with every item held are one such
	// row per item on the same indicator: 350,000 of them at 10,000 x 50, for 50 columns.
	const single = new Map<number, { from: number; fromRow: number; to: number; toRow: number }>();
	for (const r of [...touched].sort((a, b) => a - b)) {
		if (options.skipRow?.(r)) continue;
		let held = 0;
		const terms: [number, number][] = [];
		for (let k = blocks.rowStarts[r]!; k < blocks.rowStarts[r + 1]!; k++) {
			const j = blocks.rowColumns[k]!;
			const p = position.get(j);
			if (p === undefined) held += blocks.rowValues[k]! * at[j]!;
			else terms.push([p, blocks.rowValues[k]!]);
		}
		const rowLower = model.rowLower[r]! - held;
		const rowUpper = model.rowUpper[r]! - held;
		const elastic = options.elasticRow?.(r) ?? false;
		if (terms.length === 1) {
			// a·x within [l, u]: a bound on x.
			const [p, a] = terms[0]!;
			const [from, to] = a > 0 ? [rowLower / a, rowUpper / a] : [rowUpper / a, rowLower / a];
			if (!elastic) {
				lower[p] = Math.max(lower[p]!, from);
				upper[p] = Math.min(upper[p]!, to);
				continue;
			}
			const tightest = single.get(p) ?? { from: -Infinity, fromRow: -1, to: Infinity, toRow: -1 };
			if (from > tightest.from) Object.assign(tightest, { from, fromRow: r });
			if (to < tightest.to) Object.assign(tightest, { to, toRow: r });
			single.set(p, tightest);
			continue;
		}
		rowList.push({ row: r, lower: rowLower, upper: rowUpper, terms });
	}
	for (const [p, { from, fromRow, to, toRow }] of single) {
		if (fromRow >= 0) rowList.push({ row: fromRow, lower: from, upper: Infinity, terms: [[p, 1]] });
		if (toRow >= 0) rowList.push({ row: toRow, lower: -Infinity, upper: to, terms: [[p, 1]] });
	}
	const integral = free.map((j) => !options.relaxed && model.integrality[j] === 1);
	free.forEach((_, p) => {
		if (!integral[p]) return;
		// Bounds of an integer column made from fractional held values: the whole numbers inside.
		// Within 1e-6 of a whole number is that number: held LP values are exact only to HiGHS's 1e-7.
		lower[p] = Math.ceil(lower[p]! - 1e-6);
		upper[p] = Math.floor(upper[p]! + 1e-6);
	});
	// Bounds crossed by round-off only are met at one point.
	free.forEach((_, p) => {
		if (lower[p]! > upper[p]! && lower[p]! - upper[p]! <= 1e-6 * Math.max(1, Math.abs(upper[p]!)))
			lower[p] = upper[p]!;
	});
	const costs = options.costs ?? model.colCost;
	const colCost = free.map((j) => costs[j]!);
	const columnsMeaning: ColumnMeaning[] = free.map((j) => model.columns[j]!);
	const map = [...free];
	const slackTerms: [number, number, number][] = []; // [row position, column position, coefficient]
	const penalty = options.penalty ?? 0;
	rowList.forEach((row, at) => {
		if (!options.elasticRow?.(row.row)) return;
		for (const direction of [1, -1]) {
			if (direction === 1 && !Number.isFinite(row.lower)) continue;
			if (direction === -1 && !Number.isFinite(row.upper)) continue;
			const p = map.length;
			map.push(-1);
			lower.push(0);
			upper.push(Infinity);
			colCost.push(penalty);
			integral.push(false);
			columnsMeaning.push({ kind: 'slack', row: row.row });
			slackTerms.push([at, p, direction]);
		}
	});
	const numCols = map.length;
	const numRows = rowList.length;
	const perColumn: [number, number][][] = Array.from({ length: numCols }, () => []);
	rowList.forEach((row, r) => {
		for (const [p, a] of row.terms) perColumn[p]!.push([r, a]);
	});
	for (const [r, p, a] of slackTerms) perColumn[p]!.push([r, a]);
	const starts = new Int32Array(numCols + 1);
	perColumn.forEach((list, p) => (starts[p + 1] = starts[p]! + list.length));
	const indices = new Int32Array(starts[numCols]!);
	const values = new Float64Array(starts[numCols]!);
	perColumn.forEach((list, p) =>
		list.forEach(([r, a], k) => {
			indices[starts[p]! + k] = r;
			values[starts[p]! + k] = a;
		})
	);
	const integrality = Int32Array.from(integral.map((i) => (i ? 1 : 0)));
	const rowsMeaning: RowMeaning[] = rowList.map((row) => model.rows[row.row]!);
	return {
		columns: map,
		model: {
			numCols,
			numRows,
			colCost: Float64Array.from(colCost),
			colLower: Float64Array.from(lower),
			colUpper: Float64Array.from(upper),
			integrality,
			rowLower: Float64Array.from(rowList.map((r) => r.lower)),
			rowUpper: Float64Array.from(rowList.map((r) => r.upper)),
			starts,
			indices,
			values,
			columns: columnsMeaning,
			rows: rowsMeaning,
			integers: integral.filter(Boolean).length,
			uncovered: [],
			elastic: false
		}
	};
}
