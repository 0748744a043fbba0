import PgBoss from 'pg-boss';
import { config } from '../config';
import type { OutgoingMail } from '../mail';

// Background work through pg-boss on the same PostgreSQL: closing events at their deadline and sending
// mail with retries. Any process may enqueue; the processes that call startWorkers() do the work.
export const QUEUES = {
	closeEvent: 'event-close',
	mail: 'mail',
	awardRun: 'award-run',
	notice: 'notice',
	signInLink: 'sign-in-link'
} as const;

let boss: PgBoss | undefined;
let starting: Promise<PgBoss> | undefined;

/**
 * pg-boss's schema and one partition table per queue, made by the owner of the database in the migrate
 * step (docker-free-fakes/db.ts): the app's role may not create tables, so it runs with `migrate: false`.
 */
export async function installJobQueues(ownerUrl: string): Promise<void> {
	const instance = new PgBoss({ connectionString: ownerUrl, max: 2, supervise: false, schedule: false });
	await instance.start();
	try {
		for (const name of [...Object.values(QUEUES), '__pgboss__send-it']) await instance.createQueue(name);
	} finally {
		await instance.stop({ graceful: false, wait: true });
	}
}

/** The process's pg-boss, started on first use; its schema and queues must already exist. */
export function jobs(): Promise<PgBoss> {
	starting ??= (async () => {
		const instance = new PgBoss({ connectionString: config().DATABASE_URL, max: 4, migrate: false });
		instance.on('error', (error) =>
			console.error(JSON.stringify({ level: 'error', source: 'pg-boss', message: error.message }))
		);
		await instance.start();
		for (const name of Object.values(QUEUES))
			if (!(await instance.getQueue(name)))
				throw new Error(`the job queue "${name}" does not exist: run the migrations as the database owner`);
		boss = instance;
		return instance;
	})();
	return starting;
}

export async function stopJobs(): Promise<void> {
	const running = boss;
	boss = undefined;
	starting = undefined;
	await running?.stop({ graceful: true, wait: true, timeout: 5_000 });
}

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
