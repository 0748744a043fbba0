// The award model's arrays and meanings, and the builder that fills them: columns in typed arrays that
// grow, rows as lists of (column, coefficient) terms, compressed to sparse columns when finished.
export type ColumnMeaning =
	/** step: the units one of the column stands for, when the quantity moves in steps (an integer column then); else 1. */
	| { kind: 'tier'; bid: number; tier: number; unitPrice: number; step?: number }
	| { kind: 'tier_used'; bid: number; tier: number }
	| { kind: 'bundle'; bundle: number }
	| { kind: 'wins'; supplier: string; item: string }
	| { kind: 'wins_group'; supplier: string; group: string }
	/** T[G]: the spend over a group of `items` items, written once for the share rows of each supplier. */
	| { kind: 'spend_total'; items: number }
	| { kind: 'slack'; row: number };

export type RowMeaning =
	| { kind: 'cover'; item: string }
	| { kind: 'capacity'; supplier: string }
	| { kind: 'rule'; rule: number; items: string[]; suppliers: string[]; unit: 'quantity' | 'spend' | 'count' }
	| { kind: 'structure' };

export interface AwardModel {
	numCols: number;
	numRows: number;
	colCost: Float64Array;
	colLower: Float64Array;
	colUpper: Float64Array;
	integrality: Int32Array;
	rowLower: Float64Array;
	rowUpper: Float64Array;
	/** Compressed sparse columns. */
	starts: Int32Array;
	indices: Int32Array;
	values: Float64Array;
	columns: ColumnMeaning[];
	rows: RowMeaning[];
	integers: number;
	/** Items left out of the cover rule, with the reason. */
	uncovered: { item: string; reason: string }[];
	/** Whether every row of a rule, cover and capacity has a penalised slack (for conflicts). */
	elastic: boolean;
}

export interface BuildOptions {
	/** Feasibility relaxation: each rule, cover and capacity row gets a slack; the objective is their sum. */
	elastic?: boolean;
	/** Leave these rules out (by index in problem.rules), for rule costs. */
	withoutRules?: ReadonlySet<number>;
}

/** Linear terms as flat (column, coefficient) pairs; repeated columns are summed when the model is finished. */
export type Terms = number[];

export function addTerm(terms: Terms, column: number, coefficient: number): void {
	if (coefficient !== 0) terms.push(column, coefficient);
}

export function addAll(into: Terms, from: Terms | undefined, factor = 1): void {
	if (!from) return;
	for (let k = 0; k < from.length; k += 2) addTerm(into, from[k]!, from[k + 1]! * factor);
}

export class Builder {
	// Column data in typed arrays that double when full: a model of 350k bids makes no garbage here.
	cost: Float64Array;
	lower: Float64Array;
	upper: Float64Array;
	integer: Uint8Array;
	readonly columns: ColumnMeaning[] = [];
	readonly rowTerms: Terms[] = [];
	readonly rowLower: number[] = [];
	readonly rowUpper: number[] = [];
	readonly rows: RowMeaning[] = [];

	constructor(expectedColumns: number) {
		const size = Math.max(16, expectedColumns);
		this.cost = new Float64Array(size);
		this.lower = new Float64Array(size);
		this.upper = new Float64Array(size);
		this.integer = new Uint8Array(size);
	}

	column(meaning: ColumnMeaning, cost: number, lower: number, upper: number, integer = false): number {
		const j = this.columns.length;
		if (j === this.cost.length) {
			const grow = <T extends Float64Array | Uint8Array>(from: T, to: T): T => (to.set(from), to);
			this.cost = grow(this.cost, new Float64Array(2 * j));
			this.lower = grow(this.lower, new Float64Array(2 * j));
			this.upper = grow(this.upper, new Float64Array(2 * j));
			this.integer = grow(this.integer, new Uint8Array(2 * j));
		}
		this.columns.push(meaning);
		this.cost[j] = cost;
		this.lower[j] = lower;
		this.upper[j] = upper;
		this.integer[j] = integer ? 1 : 0;
		return j;
	}

	row(meaning: RowMeaning, terms: Terms, lower: number, upper: number): number {
		this.rows.push(meaning);
		this.rowTerms.push(terms);
		this.rowLower.push(lower);
		this.rowUpper.push(upper);
		return this.rows.length - 1;
	}

	finish(uncovered: AwardModel['uncovered'], elastic: boolean): AwardModel {
		const numCols = this.columns.length;
		const numRows = this.rows.length;
		// Sum repeated columns within each row (a bundle's column can reach a row through several items),
		// compacting each row's terms in place.
		const mark = new Int32Array(numCols).fill(-1);
		const at = new Int32Array(numCols);
		const merged: Terms[] = this.rowTerms;
		merged.forEach((terms, row) => {
			let end = 0;
			for (let k = 0; k < terms.length; k += 2) {
				const column = terms[k]!;
				if (mark[column] === row) terms[at[column]! + 1]! += terms[k + 1]!;
				else {
					mark[column] = row;
					at[column] = end;
					terms[end] = column;
					terms[end + 1] = terms[k + 1]!;
					end += 2;
				}
			}
			terms.length = end;
		});
		const counts = new Int32Array(numCols + 1);
		for (const terms of merged) for (let k = 0; k < terms.length; k += 2) counts[terms[k]! + 1]! += 1;
		for (let j = 0; j < numCols; j++) counts[j + 1]! += counts[j]!;
		const starts = Int32Array.from(counts);
		const next = Int32Array.from(counts.subarray(0, numCols));
		const indices = new Int32Array(starts[numCols]!);
		const values = new Float64Array(starts[numCols]!);
		merged.forEach((terms, row) => {
			for (let k = 0; k < terms.length; k += 2) {
				const position = next[terms[k]!]!++;
				indices[position] = row;
				values[position] = terms[k + 1]!;
			}
		});
		return {
			numCols,
			numRows,
			colCost: this.cost.slice(0, numCols),
			colLower: this.lower.slice(0, numCols),
			colUpper: this.upper.slice(0, numCols),
			integrality: Int32Array.from(this.integer.subarray(0, numCols)),
			rowLower: Float64Array.from(this.rowLower),
			rowUpper: Float64Array.from(this.rowUpper),
			starts,
			indices,
			values,
			columns: this.columns,
			rows: this.rows,
			integers: this.integer.subarray(0, numCols).reduce((a, b) => a + b, 0),
			uncovered,
			elastic
		};
	}
}
