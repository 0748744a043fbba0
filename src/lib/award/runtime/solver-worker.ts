// One worker thread of the pool: its own HiGHS instance, one solve at a time.
import { parentPort } from 'node:worker_threads';
import type { AwardModel } from '../core/model-builder';
import type { SolveOptions, SolveProgress } from '../core/solver';
import { InProcessSolver } from './highs-instance';

const solver = new InProcessSolver();

parentPort!.on(
	'message',
	(message: { id: number; model: AwardModel; options: SolveOptions; reports: boolean }) => {
		const report = message.reports
			? (progress: SolveProgress) => parentPort!.postMessage({ id: message.id, progress })
			: undefined;
		solver.solve(message.model, message.options, report).then(
			(outcome) => parentPort!.postMessage({ id: message.id, outcome }),
			(error: Error) => parentPort!.postMessage({ id: message.id, error: error.message })
		);
	}
);
