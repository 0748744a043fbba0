// The generic mail queue: one mail per job, sent once under the job's key (services/mail-delivery.ts).
import type PgBoss from 'pg-boss';
import type { OutgoingMail } from '../../mail';
import { deliverOnce } from '../../services/mail-delivery';

export type QueuedMail = Omit<OutgoingMail, 'attachments' | 'messageId'> & {
	attachments?: { filename: string; content: string; contentType?: string }[];
	/** The idempotency key of this mail; without one, the job's id (the same on every retry). */
	key?: string;
};

export async function handleMail(job: PgBoss.Job<QueuedMail>): Promise<void> {
	const { key, attachments, ...mail } = job.data;
	const outcome = await deliverOnce(key ?? `mail:${job.id}`, {
		...mail,
		attachments: attachments?.map((a) => ({ ...a, content: Buffer.from(a.content, 'base64') }))
	});
	if (outcome === 'in flight') throw new Error('another worker is sending this mail right now');
}
