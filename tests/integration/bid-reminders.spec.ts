// Before the deadline the buyer sees who has and has not bid (never a price) and may remind the invited
// suppliers who have not: an e-mail that names no other supplier (issue: the Bids tab before the deadline).
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { aUser, closeTestDb, testDb, type TestUser } from '../support/factories';
import {
	aSignedInUser,
	aSupplierOrganisationWithUser,
	anOpenEvent,
	signedIn,
	untilPast,
	uploadSheet,
	type TestEvent
} from '../support/events';
import type { Browserless } from '../support/http';
import { latestMailTo, mailTo, type FakeMail } from '../support/mail';

afterAll(closeTestDb);

interface Supplier {
	name: string;
	organisationId: string;
	users: TestUser[];
	client: Browserless;
}

async function aSupplier(): Promise<Supplier> {
	const { organisation, user } = await aSupplierOrganisationWithUser();
	return {
		name: organisation.name,
		organisationId: organisation.id,
		users: [user],
		client: await signedIn(user)
	};
}

// A's unit price on every item: a number no time stamp, id or count of this test contains on its own.
const PRICE = '7.43';
const hasPrice = (text: string) => /(?<![\d.])7\.43(?!\d)/.test(text);

/** Uploads a bid from the supplier: the event's CSV bid sheet with PRICE on every line. */
async function bid(supplier: Supplier, eventId: string) {
	const sheet = await (await supplier.client.get(`/api/events/${eventId}/bid-sheet?format=csv`)).text();
	const [header, ...rows] = sheet.trim().split('\r\n');
	const csv = [header, ...rows.map((row) => `${row},${PRICE}`)].join('\r\n');
	expect((await uploadSheet(supplier.client, eventId, Buffer.from(csv), 'bid.csv')).status).toBe(201);
}

const remind = (client: Browserless, eventId: string) =>
	client.request(`/api/events/${eventId}/reminders`, { method: 'POST', accept: 'application/json' });
const status = (client: Browserless, eventId: string) =>
	client.get(`/api/events/${eventId}/reminders`, 'application/json');

interface StatusJson {
	open: boolean;
	invited: {
		organisationId: string;
		name: string;
		status: string;
		revisions: number;
		latestAt: string | null;
	}[];
	lastReminder: { at: string; byName: string; suppliers: number } | null;
}

const isReminder = (reference: string) => (m: FakeMail) =>
	m.subject.startsWith('Reminder') && m.subject.includes(reference);
const remindersTo = async (user: TestUser, reference: string) =>
	(await mailTo(user.email)).filter(isReminder(reference));

let buyer: { user: TestUser; client: Browserless };
let a: Supplier;
let b: Supplier;
let c: Supplier;
let event: TestEvent;

beforeAll(async () => {
	[buyer, a, b, c] = await Promise.all([aSignedInUser('buyer'), aSupplier(), aSupplier(), aSupplier()]);
	// C has two users: each of them is reminded.
	c.users.push(await aUser('supplier', { organisationId: c.organisationId }));
	event = await anOpenEvent({
		createdBy: buyer.user.id,
		invite: [a.organisationId, b.organisationId, c.organisationId]
	});
	await bid(a, event.id);
});

describe('who has bid, before the deadline', () => {
	it('shows the buyer that A has bid and B and C have not, sorted by name, without a price', async () => {
		const response = await status(buyer.client, event.id);
		expect(response.status).toBe(200);
		const text = await response.text();
		expect(hasPrice(text)).toBe(false);
		const answer = JSON.parse(text) as StatusJson;
		expect(answer.open).toBe(true);
		expect(answer.lastReminder).toBeNull();
		const names = answer.invited.map((s) => s.name);
		expect(names).toEqual([a.name, b.name, c.name].sort());
		const of = (s: Supplier) => answer.invited.find((i) => i.organisationId === s.organisationId);
		expect(of(a)).toMatchObject({ status: 'bid', revisions: 1 });
		expect(Date.parse(of(a)!.latestAt!)).not.toBeNaN();
		for (const s of [b, c]) expect(of(s)).toMatchObject({ status: 'no_bid', revisions: 0, latestAt: null });
	});
});

describe('a reminder to the suppliers who have not bid', () => {
	const mails = new Map<string, FakeMail>();
	let sent: Response;

	beforeAll(async () => {
		const before = new Date();
		sent = await remind(buyer.client, event.id);
		if (sent.status === 200)
			for (const user of [...b.users, ...c.users])
				mails.set(
					user.email,
					await latestMailTo(user.email, { after: before, subject: /^Reminder/, timeoutMs: 15_000 })
				);
	});

	it('mails every user of B and C and nobody at A', async () => {
		expect(sent.status).toBe(200);
		expect(await sent.json()).toEqual({ suppliers: 2, mailed: 3 });
		for (const user of [...b.users, ...c.users]) {
			expect(mails.get(user.email)?.subject).toContain(event.reference);
			expect(await remindersTo(user, event.reference)).toHaveLength(1);
		}
		// The three above went out through the same queue; give a stray fourth a moment more all the same.
		await new Promise((r) => setTimeout(r, 1000));
		expect(await remindersTo(a.users[0]!, event.reference)).toEqual([]);
	});

	it('names no other supplier and no price, only the event, the deadline and the link', async () => {
		expect(mails.size).toBe(3);
		for (const [address, mail] of mails) {
			const own = [b, c].find((s) => s.users.some((u) => u.email === address))!;
			const whole = [mail.subject, mail.text, mail.html ?? ''].join('\n');
			for (const other of [a, b, c].filter((s) => s !== own)) {
				expect(whole).not.toContain(other.name);
				expect(whole).not.toContain(other.organisationId);
			}
			expect(hasPrice(whole)).toBe(false);
			expect(mail.text).toContain(event.reference);
			// The deadline in the event's zone (anOpenEvent: Europe/Berlin), as other event mails give it.
			expect(mail.text).toMatch(/Bids close at \d{4}-\d\d-\d\d \d\d:\d\d \(Europe\/Berlin\)/);
			expect(mail.text).toContain(`/supplier/events/${event.id}`);
		}
	});

	it('records the reminder in the trail with the suppliers reminded and the count mailed', async () => {
		const entries = await testDb()('trail_entries').where({ event_id: event.id, action: 'reminder sent' });
		expect(entries).toHaveLength(1);
		expect(entries[0].actor_user_id).toBe(buyer.user.id);
		expect([...entries[0].detail.suppliers].sort()).toEqual([b.organisationId, c.organisationId].sort());
		expect(entries[0].detail.mailed).toBe(3);
		const answer = (await (await status(buyer.client, event.id)).json()) as StatusJson;
		expect(answer.lastReminder).toMatchObject({ byName: buyer.user.name, suppliers: 2 });
	});

	it('refuses a second reminder within the hour, saying when the last went, and sends nothing more', async () => {
		const again = await remind(buyer.client, event.id);
		expect(again.status).toBe(409);
		expect(((await again.json()) as { message: string }).message).toMatch(
			/last reminder for this event went at .*\(Europe\/Berlin\)\. Another can be sent from /
		);
		await new Promise((r) => setTimeout(r, 1500));
		for (const user of [...b.users, ...c.users])
			expect(await remindersTo(user, event.reference)).toHaveLength(1);
		expect(
			await testDb()('trail_entries').where({ event_id: event.id, action: 'reminder sent' })
		).toHaveLength(1);
	});
});

describe('who may see and send it', () => {
	it('refuses suppliers: the invited one with 403, another with 404, on both routes', async () => {
		const outsider = await aSupplier();
		for (const [who, expected] of [
			[a, 403],
			[b, 403],
			[outsider, 404]
		] as const) {
			const seen = await status(who.client, event.id);
			expect(seen.status).toBe(expected);
			expect(await seen.text()).not.toContain(c.name);
			expect((await remind(who.client, event.id)).status).toBe(expected);
		}
	});

	it('lets an approver read the status but not send a reminder', async () => {
		const approver = await aSignedInUser('approver');
		expect((await status(approver.client, event.id)).status).toBe(200);
		expect((await remind(approver.client, event.id)).status).toBe(403);
	});
});

describe('one reminder at a time, and only to whom it is due', () => {
	it('sends one reminder for two clicks at once', async () => {
		const twice = await anOpenEvent({ createdBy: buyer.user.id, invite: [b.organisationId] });
		const answers = await Promise.all([remind(buyer.client, twice.id), remind(buyer.client, twice.id)]);
		expect(answers.map((r) => r.status).sort()).toEqual([200, 409]);
		expect(
			await testDb()('trail_entries').where({ event_id: twice.id, action: 'reminder sent' })
		).toHaveLength(1);
	});

	it('leaves alone a supplier that withdrew its bid', async () => {
		const withdrew = await anOpenEvent({
			createdBy: buyer.user.id,
			invite: [a.organisationId, b.organisationId]
		});
		await bid(a, withdrew.id);
		const withdrawal = await a.client.postForm(
			`/supplier/events/${withdrew.id}?/withdraw`,
			{},
			'application/json'
		);
		expect(withdrawal.status).toBe(200);
		const answer = (await (await status(buyer.client, withdrew.id)).json()) as StatusJson;
		expect(answer.invited.find((s) => s.organisationId === a.organisationId)).toMatchObject({
			status: 'withdrawn',
			revisions: 2
		});
		const sent = await remind(buyer.client, withdrew.id);
		expect(await sent.json()).toEqual({ suppliers: 1, mailed: 1 });
		await latestMailTo(b.users[0]!.email, { subject: new RegExp(`^Reminder.*${withdrew.reference}`) });
		await new Promise((r) => setTimeout(r, 1000));
		expect(await remindersTo(a.users[0]!, withdrew.reference)).toEqual([]);
	});

	it('refuses when every invited supplier has bid', async () => {
		const done = await anOpenEvent({ createdBy: buyer.user.id, invite: [a.organisationId] });
		await bid(a, done.id);
		const refused = await remind(buyer.client, done.id);
		expect(refused.status).toBe(409);
		expect(((await refused.json()) as { message: string }).message).toBe(
			'Every invited supplier has bid; nobody to remind.'
		);
	});

	it('refuses a reminder after the deadline', async () => {
		const deadline = new Date(Date.now() + 4000);
		const late = await anOpenEvent({ createdBy: buyer.user.id, invite: [b.organisationId], deadline });
		// A deadline only moves later once published, so the test waits for it to pass.
		await untilPast(deadline);
		const refused = await remind(buyer.client, late.id);
		expect(refused.status).toBe(409);
		expect(((await refused.json()) as { message: string }).message).toMatch(/bid deadline passed/);
		expect(((await (await status(buyer.client, late.id)).json()) as StatusJson).open).toBe(false);
		expect(await remindersTo(b.users[0]!, late.reference)).toEqual([]);
	});
});
