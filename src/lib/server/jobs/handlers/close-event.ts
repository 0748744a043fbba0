// The deadline job: opens the bids of an event whose deadline passed (idempotent).
import type PgBoss from 'pg-boss';
import { closeIfDue } from '../../services/events';

export interface CloseEventJob {
	eventId: string;
}

export async function handleCloseEvent([job]: PgBoss.Job<CloseEventJob>[]): Promise<void> {
	if (job) await closeIfDue(job.data.eventId, 'deadline job');
}
