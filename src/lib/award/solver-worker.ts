// One worker thread of the pool: its own HiGHS instance, one solve at a time.
import { parentPort } from 'node:worker_threads';
import type { AwardModel } from './model';
import { InProcessSolver } from './highs-instance';
import type { SolveOptions } from './solve';

const solver = new InProcessSolver();

parentPort!.on('message', (message: { id: number; model: AwardModel; options: SolveOptions }) => {
	solver.solve(message.model, message.options).then(
		(outcome) => parentPort!.postMessage({ id: message.id, outcome }),
		(error: Error) => parentPort!.postMessage({ id: message.id, error: error.message })
	);
});
