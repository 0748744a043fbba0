import { sendMail, type OutgoingMail } from '../mail';
import { closeIfDue } from '../services/events';
import { jobs, QUEUES, type CloseEventJob } from '.';

type QueuedMail = Omit<OutgoingMail, 'attachments'> & {
	attachments?: { filename: string; content: string; contentType?: string }[];
};

/** Takes work from the queues in this process: closing events at their deadline and sending mail. */
export async function startWorkers(): Promise<void> {
	const queue = await jobs();
	await queue.work<CloseEventJob>(QUEUES.closeEvent, async ([job]) => {
		if (job) await closeIfDue(job.data.eventId, 'deadline job');
	});
	await queue.work<QueuedMail>(QUEUES.mail, { batchSize: 5 }, async (batch) => {
		// A failure throws, so pg-boss retries the batch with backoff while the relay is down.
		for (const job of batch) {
			await sendMail({
				...job.data,
				attachments: job.data.attachments?.map((a) => ({ ...a, content: Buffer.from(a.content, 'base64') }))
			});
		}
	});
}
