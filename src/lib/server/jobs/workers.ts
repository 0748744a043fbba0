import { sendSignInLink, type SignInLinkJob } from '../auth/sign-in-links';
import { sendMail, type OutgoingMail } from '../mail';
import { closeIfDue } from '../services/events';
import { jobs, QUEUES, type CloseEventJob } from '.';
import { sendNotice } from './notices';

type QueuedMail = Omit<OutgoingMail, 'attachments'> & {
	attachments?: { filename: string; content: string; contentType?: string }[];
};

/**
 * Takes work from the queues in this process: closing events at their deadline, mail and notices; award
 * runs only where asked (worker processes), so a web process never solves.
 */
export async function startWorkers(options: { awardRuns?: boolean } = {}): Promise<void> {
	const queue = await jobs();
	await queue.work<{ noticeId: string }>(QUEUES.notice, async ([job]) => {
		if (job) await sendNotice(job.data.noticeId);
	});
	if (options.awardRuns) {
		const { runAward, failAbandonedRuns } = await import('./award-runs');
		await failAbandonedRuns();
		// A run whose worker died and whose job will not come back is failed with a reason, never lost.
		setInterval(() => void failAbandonedRuns().catch(() => undefined), 10_000).unref();
		await queue.work<{ runId: string }>(QUEUES.awardRun, async ([job]) => {
			if (job) await runAward(job.data.runId);
		});
	}
	// People wait for these: polled often and taken a few at a time (a retried batch may send a link twice).
	await queue.work<SignInLinkJob>(
		QUEUES.signInLink,
		{ batchSize: 5, pollingIntervalSeconds: 0.5 },
		async (batch) => {
			for (const job of batch) await sendSignInLink(job.data);
		}
	);
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
