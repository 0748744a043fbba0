// Fault tests with real processes for mail: one recipient refused by the relay, and the sending worker
// killed with SIGKILL mid-notice. Every recipient must get exactly one notice, counted in the SMTP fake.
import { afterAll, describe, expect, it } from 'vitest';
import { canonicalJson, sha256 } from '../../src/lib/server/trail';
import { mailApi } from '../support/env';
import { anOpenEvent, aStoredRun } from '../support/events';
import { anOrganisation, aUser, closeTestDb, testDb, type TestUser } from '../support/factories';
import { mailTo } from '../support/mail';
import { privateQueues, sendTo, startWorker, until, type TestWorker } from '../support/workers';

const started: TestWorker[] = [];
const faults: string[] = [];
afterAll(async () => {
	for (const worker of started) await worker.kill();
	for (const path of faults) await fetch(`${mailApi()}${path}`, { method: 'DELETE' });
	await closeTestDb();
});

async function fault(path: string) {
	faults.push(path.split('?')[0]!);
	expect((await fetch(`${mailApi()}${path}`, { method: 'PUT' })).ok).toBe(true);
}

/** An approved run's award notice to a supplier with `users` users, queued as the sign-off queues it. */
async function aNotice(users: number) {
	const buyer = await aUser('buyer');
	const supplier = await anOrganisation('supplier');
	const recipients: TestUser[] = [];
	for (let k = 0; k < users; k++) recipients.push(await aUser('supplier', { organisationId: supplier.id }));
	const event = await anOpenEvent({ createdBy: buyer.id, invite: [supplier.id] });
	const problem = {
		currency: 'EUR',
		items: [{ ref: 'IT-1', quantity: 100 }],
		suppliers: [{ ref: supplier.name }],
		bids: [{ supplier: supplier.name, item: 'IT-1', unitPrice: 3 }],
		bundles: [],
		rules: []
	};
	const result = {
		status: 'optimal',
		totalCost: 300,
		awards: [{ supplier: supplier.name, item: 'IT-1', quantity: 100, unitPrice: 3, cost: 300 }]
	};
	const run = await aStoredRun({
		eventId: event.id,
		createdBy: buyer.id,
		problem,
		fields: {
			status: 'done',
			result: JSON.stringify(result),
			result_sha256: sha256(canonicalJson(result))
		}
	});
	const [notice] = await testDb()('notices')
		.insert({
			event_id: event.id,
			run_id: run.id,
			supplier_organisation_id: supplier.id,
			kind: 'award',
			standstill_ends_on: '2027-01-15'
		})
		.returning('id');
	return { noticeId: notice.id as string, eventId: event.id, recipients };
}

const noticesTo = async (user: TestUser) =>
	(await mailTo(user.email)).filter((m) => /award/i.test(m.subject));
const readNotice = (id: string) => testDb()('notices').where({ id }).first();
const sentTrail = (eventId: string) =>
	testDb()('trail_entries').where({ event_id: eventId, action: 'award notice sent' });

describe('mail exactly once', () => {
	it('sends every recipient exactly one notice when the relay refuses one of them at first', async () => {
		const prefix = await privateQueues();
		started.push(await startWorker(prefix));
		const { noticeId, eventId, recipients } = await aNotice(4);
		// The third recipient is refused twice (451): the notice job fails, and is retried.
		await fault(`/outages/${encodeURIComponent(recipients[2]!.email)}?times=2`);
		await sendTo(`${prefix}notice`, { noticeId }, { retryLimit: 30, retryDelay: 1 });
		const notice = await until(
			'the notice is sent',
			() => readNotice(noticeId),
			(n) => n.status === 'sent',
			90
		);
		for (const user of recipients) expect(await noticesTo(user), user.email).toHaveLength(1);
		expect(notice.attempts).toBeGreaterThanOrEqual(3);
		// The dispatch time is the first successful send: before the refused recipient got its notice.
		const [thirdMail] = await noticesTo(recipients[2]!);
		expect(notice.sent_at.getTime()).toBeLessThan(new Date(thirdMail!.receivedAt).getTime());
		expect(await sentTrail(eventId)).toHaveLength(1);
	}, 120_000);

	it('sends the generic mail queue’s other mails once when one of a batch is refused', async () => {
		const prefix = await privateQueues();
		started.push(await startWorker(prefix));
		const users = await Promise.all([1, 2, 3, 4].map(() => aUser('supplier')));
		await fault(`/outages/${encodeURIComponent(users[1]!.email)}?times=1`);
		// Due together, so the worker takes them in one batch (pg-boss hands up to 5 at a time).
		await sendTo(
			`${prefix}mail`,
			users.map((user) => ({
				to: user.email,
				subject: 'Batch test',
				text: 'One mail.',
				html: '<p>One mail.</p>'
			})),
			// All become due at the same moment.
			{ retryLimit: 5, retryDelay: 1, startAfter: new Date(Date.now() + 2000) }
		);
		for (const user of users)
			await until(
				'the mail arrives',
				() => mailTo(user.email),
				(m) => m.length > 0,
				60
			);
		// Time for a wrongly retried batch to mail again.
		await new Promise((r) => setTimeout(r, 5000));
		for (const user of users) expect(await mailTo(user.email), user.email).toHaveLength(1);
	}, 120_000);

	it('sends every recipient exactly one notice when the sending worker is killed mid-notice', async () => {
		const prefix = await privateQueues();
		const doomed = await startWorker(prefix);
		started.push(doomed);
		const { noticeId, eventId, recipients } = await aNotice(5);
		// The relay takes the third recipient's notice at once but answers it 20 s late: the worker is killed
		// after the relay has the mail and before it could record it as sent (the one uncertain moment).
		await fault(`/holds/${encodeURIComponent(recipients[2]!.email)}?seconds=20`);
		await sendTo(`${prefix}notice`, { noticeId }, { retryLimit: 30, retryDelay: 1 });
		await until(
			'the relay has the third recipient’s notice',
			() => noticesTo(recipients[2]!),
			(m) => m.length === 1,
			60
		);
		const before = await readNotice(noticeId);
		await doomed.kill();
		// Mid-batch: the first two have their notice, the last two none yet.
		for (const user of recipients.slice(0, 3)) expect(await noticesTo(user)).toHaveLength(1);
		for (const user of recipients.slice(3)) expect(await noticesTo(user)).toHaveLength(0);

		// The process is restarted (as the supervisor would); pg-boss hands it the expired job.
		started.push(await startWorker(prefix));
		const notice = await until(
			'the notice is sent',
			() => readNotice(noticeId),
			(n) => n.status === 'sent',
			150
		);
		for (const user of recipients) expect(await noticesTo(user), user.email).toHaveLength(1);
		// The dispatch time is the first send's, recorded with it, and never moved later.
		expect(before.sent_at).not.toBeNull();
		expect(notice.sent_at.getTime()).toBe(before.sent_at.getTime());
		expect(await sentTrail(eventId)).toHaveLength(1);
		const deliveries = await testDb()('mail_deliveries').whereLike('key', `notice:${noticeId}:%`);
		expect(deliveries.map((d) => d.status)).toEqual(['sent', 'sent', 'sent', 'sent', 'sent']);
	}, 200_000);
});
