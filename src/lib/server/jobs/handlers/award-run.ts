// The award-run job: the run is claimed, solved and stored by services/run-execution.ts.
import type PgBoss from 'pg-boss';
import { executeRun, type RunJob } from '../../services/run-execution';

export async function handleAwardRun([job]: PgBoss.Job<RunJob>[]): Promise<void> {
	if (job) await executeRun(job.data.runId);
}
