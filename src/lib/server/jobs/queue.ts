// The job queue (pg-boss on the same PostgreSQL), below the services: a service sends a job inside its own
// transaction, so the job is committed with the change that needs it, or not at all. The handlers that
// take the jobs live in jobs/handlers and sit above the services.
import PgBoss from 'pg-boss';
import { config } from '../config';
import type { Db } from '../db/knex';
import type { OutgoingMail } from '../mail';

export const QUEUES = {
	closeEvent: 'event-close',
	mail: 'mail',
	awardRun: 'award-run',
	notice: 'notice',
	signInLink: 'sign-in-link',
	explainRun: 'explain-run'
} as const;

export type QueueName = (typeof QUEUES)[keyof typeof QUEUES];

/**
 * Each queue's defaults, for jobs sent without their own. A job whose worker died is handed to another
 * worker after its expiry: short for mail, whose every send is recorded under an idempotency key first
 * (a redelivered job never mails anyone twice); award runs and explanations are taken over sooner, by
 * the heartbeat sweep of the workers (services/run-execution.ts).
 */
export const QUEUE_POLICIES: Record<QueueName, Omit<PgBoss.Queue, 'name'>> = {
	'event-close': { retryLimit: 5 },
	mail: { expireInSeconds: 30, retryLimit: 10, retryDelay: 5, retryBackoff: true },
	notice: { expireInSeconds: 30, retryLimit: 30, retryDelay: 2, retryBackoff: true },
	'sign-in-link': { expireInSeconds: 30, retryLimit: 5, retryDelay: 5, retryBackoff: true },
	'award-run': { expireInSeconds: 1800, retryLimit: 2, retryDelay: 2 },
	'explain-run': { expireInSeconds: 3600, retryLimit: 2, retryDelay: 5 }
};

/** How often pg-boss (in some process) hands expired jobs back: the mail queues' expiry needs it often. */
export const MAINTENANCE_SECONDS = 10;

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
		for (const name of Object.values(QUEUES)) {
			await instance.createQueue(name, { name, ...QUEUE_POLICIES[name] });
			await instance.updateQueue(name, { name, ...QUEUE_POLICIES[name] });
		}
		await instance.createQueue('__pgboss__send-it');
	} finally {
		await instance.stop({ graceful: false, wait: true });
	}
}

/** The process's pg-boss, started on first use; its schema and queues must already exist. */
export function jobs(): Promise<PgBoss> {
	starting ??= (async () => {
		const instance = new PgBoss({
			connectionString: config().DATABASE_URL,
			max: 4,
			migrate: false,
			maintenanceIntervalSeconds: MAINTENANCE_SECONDS
		});
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

/**
 * pg-boss's database adapter over a Knex transaction (or the pool): pg-boss writes `$1`-style
 * placeholders, Knex's raw takes `?`, so each `$n` becomes a `?` bound to the n-th value, in order of
 * appearance (pg-boss repeats some, such as `$5`). pg-boss's SQL holds no literal `?`.
 */
export function jobDb(trx: Db): {
	executeSql(text: string, values?: unknown[]): Promise<{ rows: unknown[] }>;
} {
	return {
		async executeSql(text, values = []) {
			const bindings: unknown[] = [];
			const sql = text.replace(/\$(\d+)/g, (_, n: string) => {
				const value = values[Number(n) - 1] ?? null;
				// A job's data is a plain object (pg would send it as JSON); Knex refuses any binding that holds
				// an undefined property (such as a mail without attachments), so it goes as JSON text here.
				bindings.push(
					value !== null && typeof value === 'object' && Object.getPrototypeOf(value) === Object.prototype
						? JSON.stringify(value)
						: value
				);
				return '?';
			});
			const result = (await trx.raw(sql, bindings as never[])) as { rows: unknown[] };
			return { rows: result.rows };
		}
	};
}

/**
 * Sends a job inside the caller's transaction: it becomes visible to workers only when that transaction
 * commits, and a failure to send fails (and so rolls back) the caller. Returns the job's id, or null when
 * a singleton key already holds a job.
 */
export async function sendJob<T extends object>(
	trx: Db,
	queue: QueueName,
	data: T,
	options: PgBoss.SendOptions = {}
): Promise<string | null> {
	const instance = await jobs();
	return instance.send(queue, data, { ...options, db: jobDb(trx) });
}

/** Mail through the queue, inside the caller's transaction: retried with backoff while the relay is down. */
export async function enqueueMail(trx: Db, mails: OutgoingMail[]): Promise<void> {
	// One after the other: a transaction's connection runs one statement at a time.
	for (const mail of mails)
		await sendJob(
			trx,
			QUEUES.mail,
			{
				...mail,
				attachments: mail.attachments?.map((a) => ({ ...a, content: a.content.toString('base64') }))
			},
			{ retryLimit: 10, retryDelay: 5, retryBackoff: true }
		);
}

export interface CloseEventJob {
	eventId: string;
}

/** The job that closes an event at its deadline, inside the transaction that set the deadline. */
export async function scheduleEventClose(trx: Db, eventId: string, deadline: Date): Promise<void> {
	await sendJob(trx, QUEUES.closeEvent, { eventId } satisfies CloseEventJob, {
		startAfter: deadline,
		singletonKey: `close-${eventId}-${deadline.toISOString()}`,
		retryLimit: 5
	});
}
