// A batch handled job by job: a failing job is failed on its own (pg-boss retries only it), and the
// others complete, so one mail the relay refuses never sends the batch's other mails again.
import type PgBoss from 'pg-boss';
import { jobs } from '../queue';

export function eachJob<T>(
	queue: string,
	handle: (job: PgBoss.Job<T>) => Promise<void>
): (batch: PgBoss.Job<T>[]) => Promise<void> {
	return async (batch) => {
		for (const job of batch) {
			try {
				await handle(job);
			} catch (error) {
				// pg-boss completes the rest of the batch after this handler: only jobs still active.
				await (await jobs()).fail(queue, job.id, { message: (error as Error).message });
			}
		}
	};
}
