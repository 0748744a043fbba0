// What the engine asks of a solver: one model in, one outcome out. The engine stays pure; the runtime
// (a pool of HiGHS worker threads, or one instance in this thread) implements it.
import type { AwardModel } from './model-builder';

export interface SolveOptions {
	/** Seconds; covers the solve (HiGHS does not count the load). */
	timeLimit?: number;
	/** Relative MIP gap at which to stop. */
	gap?: number;
	/** Solve the LP relaxation even when the model has integers. */
	relax?: boolean;
	/**
	 * A known award in this model's columns, given to a MIP as its first incumbent so that the search
	 * prunes against it from the start (HiGHS checks it and ignores it when it breaks a row).
	 */
	start?: Float64Array;
	/**
	 * Hears a MIP's best award and bound as they improve (at most once a second, and at each new award).
	 * Stays in the calling thread: the pool passes only a flag to its worker.
	 */
	onProgress?: (progress: SolveProgress) => void;
}

/** A running MIP's best award (null before one), its proven bound, and its seconds so far. */
export interface SolveProgress {
	objective: number | null;
	bound: number | null;
	seconds: number;
}

export type SolveStatus =
	'optimal' | 'feasible' | 'infeasible' | 'unbounded' | 'no_solution_in_time' | 'solver_error';

export interface SolveOutcome {
	status: SolveStatus;
	objective: number | null;
	/** Best proven lower bound (MIP dual bound, or the objective of an optimal LP). */
	bound: number | null;
	gap: number | null;
	columns: Float64Array | null;
	/** Row duals (d objective / d row bound) and reduced costs; only for a solved LP. */
	rowDuals: Float64Array | null;
	reducedCosts: Float64Array | null;
	isMip: boolean;
	seconds: number;
	message?: string;
}

export interface Solver {
	solve(model: AwardModel, options: SolveOptions): Promise<SolveOutcome>;
}
