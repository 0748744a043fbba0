// The engine's answer and options, shared by the methods, the explanations and the engine itself.
import type { AwardModel } from './model-builder';
import type { AwardLine, SupplierTotal } from './result';
import type { SolveOptions, SolveProgress, SolveStatus } from './solver';

export type Method = 'lp' | 'mip' | 'decomposed' | 'lp_guided' | 'lagrangian';

export interface AwardOptions extends SolveOptions {
	/**
	 * `auto`: independent item groups are solved apart when integers are needed; a single large group
	 * goes LP-guided. `monolithic` always solves one full model.
	 */
	method?: 'auto' | 'monolithic' | 'decomposed' | 'lp_guided' | 'lagrangian';
	/** Compute rule costs, conflicts and sensitivity with the allocation (else explainAward does later). */
	explain?: boolean;
	/** Called as the best award and the bound improve (the large-problem methods report as they go). */
	onProgress?: (update: Progress) => void;
}

/** Where a solve stands: seconds since it began, the best award's cost so far (null before one), the best bound. */
export type Progress = SolveProgress;

export interface RuleCost {
	rule: number;
	label: string;
	/** What the rule adds: the optimum with all rules minus the optimum without this one (>= 0 for a restricting rule). */
	cost: number | null;
	/** What the rule adds on top of the earlier ones: the optimum with this and all earlier rules minus the optimum with only the earlier ones. */
	costOnTopOfEarlier: number | null;
	/** The optimum with this and all earlier rules minus the optimum with none: the last rule's is what all the rules cost together. */
	runningTotal: number | null;
	/**
	 * The largest tolerance of the solves behind these figures, in money: a difference within it is
	 * reported as 0. Null when unknown (explanations stored before it was recorded).
	 */
	tolerance: number | null;
	statusWithout: SolveStatus;
}

export interface Conflict {
	label: string;
	amount: number;
	text: string;
}

export interface Sensitivity {
	/** True when integer choices were fixed at the solution: then the values hold only near it. */
	local: boolean;
	coverPrices: { item: string; pricePerUnit: number; text: string }[];
	capacityPrices: { supplier: string; valuePerUnit: number; text: string }[];
	losingBids: { supplier: string; item: string; unitPrice: number; winsBelow: number; text: string }[];
}

export interface AwardResult {
	status: SolveStatus | 'invalid_input';
	method: Method;
	currency: string;
	totalCost: number | null;
	baselineCost: number | null;
	savings: number | null;
	bound: number | null;
	gap: number | null;
	awards: AwardLine[];
	supplierTotals: SupplierTotal[];
	uncoveredItems: { item: string; reason: string }[];
	solveSeconds: number;
	modelSize: { rows: number; columns: number; integers: number };
	/** Problems the independent checker found in the allocation; empty when it keeps every rule. */
	violations: string[];
	ruleCosts?: RuleCost[];
	conflicts?: Conflict[];
	sensitivity?: Sensitivity;
}

/** The explanation fields of a result: what explainAward computes. */
export type AwardExplanations = Pick<AwardResult, 'ruleCosts' | 'conflicts' | 'sensitivity'>;

/** One solve by whichever method was chosen, before it is read into an AwardResult. */
export interface Solved {
	status: SolveStatus;
	method: Method;
	objective: number | null;
	bound: number | null;
	gap: number | null;
	lines: AwardLine[];
	seconds: number;
	uncovered: { item: string; reason: string }[];
	modelSize: { rows: number; columns: number; integers: number };
}

export const modelSize = (model: AwardModel) => ({
	rows: model.numRows,
	columns: model.numCols,
	integers: model.integers
});

/** Whether a solve status carries an allocation. */
export const usable = (status: SolveStatus | 'invalid_input') =>
	status === 'optimal' || status === 'feasible';
