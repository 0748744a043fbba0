// The notice job: an award or regret notice to each of a supplier's users, once each.
import type PgBoss from 'pg-boss';
import { sendNotice, type NoticeJob } from '../../services/notice-sending';

export async function handleNotice([job]: PgBoss.Job<NoticeJob>[]): Promise<void> {
	if (job) await sendNotice(job.data.noticeId);
}
