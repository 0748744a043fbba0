// The explain-run job: rule costs, conflicts and sensitivity of a finished run, after its allocation.
import type PgBoss from 'pg-boss';
import { explainRun, type RunJob } from '../../services/run-execution';

export async function handleExplainRun([job]: PgBoss.Job<RunJob>[]): Promise<void> {
	if (job) await explainRun(job.data.runId);
}
