// Loading HiGHS (WebAssembly) and solving in the calling thread: for the worker threads of the pool,
// the CLI and tests. The web process never calls this on its main thread; it uses the pool.
import { createRequire } from 'node:module';
import highsLoader, { type Highs } from 'highs';
import type { AwardModel } from '../core/model-builder';
import type { SolveOptions, SolveOutcome, SolveProgress, Solver } from '../core/solver';
import { solveModel } from './solve-model';

const require = createRequire(import.meta.url);

export function loadHighs(): Promise<Highs> {
	// Found by module resolution, so it works bundled or not.
	return highsLoader({
		locateFile: (file: string) => (file.endsWith('.wasm') ? require.resolve('highs/runtime') : file)
	});
}

/** A HiGHS instance in this thread, replaced after any runtime error (an aborted instance is poisoned). */
export class InProcessSolver implements Solver {
	private instance: Promise<Highs> | undefined;

	async solve(
		model: AwardModel,
		options: SolveOptions,
		report: ((progress: SolveProgress) => void) | undefined = options.onProgress
	): Promise<SolveOutcome> {
		this.instance ??= loadHighs();
		const highs = await this.instance;
		try {
			return solveModel(highs, model, options, report);
		} catch (error) {
			this.instance = undefined;
			return {
				status: 'solver_error',
				objective: null,
				bound: null,
				gap: null,
				columns: null,
				rowDuals: null,
				reducedCosts: null,
				isMip: model.integers > 0,
				seconds: 0,
				message: (error as Error).message
			};
		}
	}
}
