import type { OutgoingMail } from '../mail';
import { jobs, QUEUES } from './queue';

export { installJobQueues, jobs, QUEUES, sendJob, stopJobs } from './queue';

/** Mail through the queue: retried with backoff while the relay is down. */
export async function enqueueMail(mails: OutgoingMail[]): Promise<void> {
	if (!mails.length) return;
	const queue = await jobs();
	await Promise.all(
		mails.map((mail) =>
			queue.send(
				QUEUES.mail,
				{
					...mail,
					attachments: mail.attachments?.map((a) => ({ ...a, content: a.content.toString('base64') }))
				},
				{ retryLimit: 10, retryDelay: 5, retryBackoff: true }
			)
		)
	);
}

export interface CloseEventJob {
	eventId: string;
}

export async function scheduleEventClose(eventId: string, deadline: Date): Promise<void> {
	const queue = await jobs();
	await queue.send(QUEUES.closeEvent, { eventId } satisfies CloseEventJob, {
		startAfter: deadline,
		singletonKey: `close-${eventId}-${deadline.toISOString()}`,
		retryLimit: 5
	});
}
