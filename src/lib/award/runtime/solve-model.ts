// One solve of an award model by a HiGHS instance given to it (the runner owns the instances).
import type { Highs } from 'highs';
import type { AwardModel } from '../core/model-builder';
import type { SolveOptions, SolveOutcome, SolveProgress } from '../core/solver';

/** Least seconds between two progress reports of a running MIP that found no new award. */
const PROGRESS_EVERY_SECONDS = 1;

export function solveModel(
	highs: Highs,
	model: AwardModel,
	options: SolveOptions = {},
	report?: (progress: SolveProgress) => void
): SolveOutcome {
	const isMip = model.integers > 0 && !options.relax;
	const began = performance.now();
	const instance = highs.createModel({
		numCols: model.numCols,
		numRows: model.numRows,
		colCost: model.colCost,
		colLower: model.colLower,
		colUpper: model.colUpper,
		rowLower: model.rowLower,
		rowUpper: model.rowUpper,
		matrix: {
			format: 'csc',
			numRows: model.numRows,
			numCols: model.numCols,
			starts: model.starts,
			indices: model.indices,
			values: model.values
		},
		...(isMip ? { integrality: model.integrality as unknown as Int32Array } : {})
	});
	try {
		instance.options.set({
			output_flag: false,
			time_limit: options.timeLimit ?? 60,
			mip_rel_gap: options.gap ?? 1e-6,
			// Measured on award LPs of 350k bids: HiGHS's presolve takes 2-7 s and the simplex then 0.4 s;
			// without presolve the same optimum comes in 0.4-0.5 s. MIPs keep presolve.
			presolve: isMip ? 'choose' : 'off',
			// Devex pricing for the dual simplex: on the same LPs 300-400 ms against 520-1170 ms with the
			// default choice (all 10,000 iterations either way).
			...(isMip ? {} : { simplex_dual_edge_weight_strategy: 1 })
		});
		if (isMip && options.start?.length === model.numCols) {
			try {
				instance.setSolution({ colValue: options.start });
			} catch {
				// A start HiGHS refuses leaves the search as it would be without one.
			}
		}
		if (isMip && report) instance.run(progressCallbacks(highs, report));
		else instance.run();
		const code = instance.getModelStatus();
		const codes = highs.constants.modelStatus;
		const seconds = (performance.now() - began) / 1000;
		const objective = instance.getObjectiveValue();
		const info = (name: string) => {
			try {
				const value = Number(instance.info.get(name));
				return Number.isFinite(value) ? value : null;
			} catch {
				return null;
			}
		};
		const base = { isMip, seconds, rowDuals: null, reducedCosts: null };
		if (code === codes.empty) {
			return {
				...base,
				status: 'optimal',
				objective: 0,
				bound: 0,
				gap: 0,
				columns: new Float64Array(model.numCols)
			};
		}
		if (code === codes.infeasible)
			return { ...base, status: 'infeasible', objective: null, bound: null, gap: null, columns: null };
		if (code === codes.unbounded || code === codes.unboundedOrInfeasible) {
			return { ...base, status: 'unbounded', objective: null, bound: null, gap: null, columns: null };
		}
		// A time limit with no incumbent still fills the primal vector with garbage: require a finite objective.
		const hasSolution = Number.isFinite(objective) && info('primal_solution_status') === 2;
		if (code === codes.optimal && hasSolution) {
			const solution = instance.getSolution();
			const bound = isMip ? (info('mip_dual_bound') ?? objective) : objective;
			return {
				...base,
				status: 'optimal',
				objective,
				bound,
				gap: isMip ? (info('mip_gap') ?? 0) : 0,
				columns: solution.colValue,
				rowDuals: isMip ? null : solution.rowDual,
				reducedCosts: isMip ? null : solution.colDual
			};
		}
		if (hasSolution) {
			return {
				...base,
				status: 'feasible',
				objective,
				bound: info('mip_dual_bound'),
				gap: info('mip_gap'),
				columns: instance.getSolution().colValue
			};
		}
		if (code === codes.timeLimit || code === codes.iterationLimit || code === codes.interrupted) {
			return {
				...base,
				status: 'no_solution_in_time',
				objective: null,
				bound: info('mip_dual_bound'),
				gap: null,
				columns: null
			};
		}
		return {
			...base,
			status: 'solver_error',
			objective: null,
			bound: null,
			gap: null,
			columns: null,
			message: `HiGHS model status ${code}`
		};
	} finally {
		instance.dispose();
	}
}

/** HiGHS's MIP callbacks: each new award at once, and the bound at most once a second. */
function progressCallbacks(highs: Highs, report: (progress: SolveProgress) => void) {
	const types = highs.constants.callbackType;
	let last = -Infinity;
	const number = (value: number | undefined) =>
		value !== undefined && Number.isFinite(value) ? value : null;
	const send = (data: { running_time?: number; mip_primal_bound?: number; mip_dual_bound?: number }) => {
		const seconds = data.running_time ?? 0;
		last = seconds;
		report({ objective: number(data.mip_primal_bound), bound: number(data.mip_dual_bound), seconds });
	};
	return {
		[types.mipImprovingSolution]: (event: { data: Parameters<typeof send>[0] }) => {
			send(event.data);
			return undefined;
		},
		[types.mipInterrupt]: (event: { data: Parameters<typeof send>[0] }) => {
			if ((event.data.running_time ?? 0) - last >= PROGRESS_EVERY_SECONDS) send(event.data);
			return undefined;
		}
	};
}
