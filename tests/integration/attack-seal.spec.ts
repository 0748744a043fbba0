// Issue 9, findings 2 and 3 and the encryption of bid files, tried as an attacker would: a buyer who
// brings the deadline forward or writes to the database, a buyer who brute-forces prices from what the
// trail shows before the opening, and someone who can read the object store.
import { createHash, randomBytes } from 'node:crypto';
import { spawnSync } from 'node:child_process';
import { GetObjectCommand, S3Client } from '@aws-sdk/client-s3';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { toLocalInput } from '../../src/lib/time';
import { closeTestDb, testDb } from '../support/factories';
import {
	aSignedInUser,
	aSupplierOrganisationWithUser,
	anOpenEvent,
	fillSheet,
	signedIn,
	untilPast,
	uploadSheet
} from '../support/events';
import type { Browserless } from '../support/http';
import { mailTo, type FakeMail } from '../support/mail';
import { post } from '../support/runs';
import {
	openSealedFile,
	parseBidFileKeys,
	sealedKeyId,
	verifyCommitment
} from '../../src/lib/server/storage/sealed-files';

afterAll(closeTestDb);

const ZONE = 'Europe/Berlin';
const json = async (response: Response) => (await response.json()) as Record<string, unknown>;

type Party = { client: Browserless; user: { id: number; email: string }; organisationId: string };
let buyer: Party;
let supplier: Party;

beforeAll(async () => {
	const staff = await aSignedInUser('buyer');
	const { organisation, user } = await aSupplierOrganisationWithUser();
	buyer = { ...staff, organisationId: staff.user.organisationId };
	supplier = { client: await signedIn(user), user, organisationId: organisation.id };
});

const trailOf = async (eventId: string) =>
	(await json(await buyer.client.get(`/api/events/${eventId}/trail`, 'application/json'))) as {
		entries: { seq: number; action: string; detail: Record<string, unknown> }[];
	};

const csvTemplate = async (eventId: string) =>
	(await supplier.client.get(`/api/events/${eventId}/bid-sheet?format=csv`)).text();

/** The CSV bid sheet with the same unit price on every row, as a supplier fills it. */
function filledCsv(template: string, price: string) {
	const lines = template.trim().split('\r\n');
	return Buffer.from([lines[0], ...lines.slice(1).map((l) => `${l},${price}`)].join('\r\n'));
}

const aCsvBid = async (eventId: string, price: string) => filledCsv(await csvTemplate(eventId), price);

/** Waits for a mail to the supplier about the event whose subject matches. */
async function mailAbout(reference: string, subject: RegExp): Promise<FakeMail> {
	for (let k = 0; k < 60; k++) {
		const found = (await mailTo(supplier.user.email)).find(
			(m) => m.subject.includes(reference) && subject.test(m.subject)
		);
		if (found) return found;
		await new Promise((r) => setTimeout(r, 250));
	}
	throw new Error(`no mail about ${reference} matching ${subject}`);
}
const receiptFor = (reference: string) => mailAbout(reference, /receipt|received/i);

describe('a buyer who brings the bid deadline forward', () => {
	it('is refused with the reason, mails no supplier and leaves the deadline and the trail as they were', async () => {
		const event = await anOpenEvent({ createdBy: buyer.user.id, invite: [supplier.organisationId] });
		const bid = await aCsvBid(event.id, '4.37');
		expect((await uploadSheet(supplier.client, event.id, bid, 'bid.csv')).status).toBe(201);
		await receiptFor(event.reference);
		const before = await testDb()('events').where({ id: event.id }).first();
		const trailBefore = await trailOf(event.id);
		const mailsBefore = (await mailTo(supplier.user.email)).length;

		const response = await buyer.client.postForm(`/buyer/events/${event.id}?/amend`, {
			summary: 'Closing early.',
			description: '',
			deliveryPlace: 'Test town',
			deadlineLocal: toLocalInput(new Date(Date.now() + 2 * 60_000), ZONE)
		});
		expect(response.status).toBe(422);
		const page = await response.text();
		expect(page).toContain('can only be extended');
		expect(page).toContain('National rules on time limits');

		await new Promise((r) => setTimeout(r, 1500));
		const mails = await mailTo(supplier.user.email);
		expect(mails.length).toBe(mailsBefore);
		expect(mails.filter((m) => m.subject.includes(event.reference) && /Amendment/.test(m.subject))).toEqual(
			[]
		);
		const after = await testDb()('events').where({ id: event.id }).first();
		expect(after.deadline.getTime()).toBe(before.deadline.getTime());
		expect(after.state).toBe('open');
		expect(await testDb()('amendments').where({ event_id: event.id })).toEqual([]);
		expect((await trailOf(event.id)).entries).toEqual(trailBefore.entries);
		expect((await buyer.client.get(`/api/events/${event.id}/bids`, 'application/json')).status).toBe(403);
	});

	it('is refused by the database when the deadline is lowered in SQL through the app’s own connection', async () => {
		const event = await anOpenEvent({ createdBy: buyer.user.id, invite: [supplier.organisationId] });
		await expect(
			testDb()('events')
				.where({ id: event.id })
				.update({ deadline: new Date(Date.now() - 1000) })
		).rejects.toThrow(/can only move later/);
		await expect(
			testDb()('events').where({ id: event.id }).update({ state: 'draft', published_at: null })
		).rejects.toThrow(/cannot return to draft/);
	});

	it('is refused by the database when an opening is recorded in SQL before the deadline', async () => {
		const event = await anOpenEvent({ createdBy: buyer.user.id, invite: [supplier.organisationId] });
		await expect(
			testDb()('events').where({ id: event.id }).update({ state: 'closed', opened_at: new Date() })
		).rejects.toThrow(/before the bid deadline/);
	});

	it('gets no early opening from the closing job scheduled for a deadline that was since extended, nor from a read', async () => {
		const first = new Date(Date.now() + 8000);
		const event = await anOpenEvent({
			createdBy: buyer.user.id,
			invite: [supplier.organisationId],
			state: 'draft',
			deadline: first
		});
		// Publishing schedules the closing job for the first deadline.
		const published = await buyer.client.postForm(
			`/buyer/events/${event.id}?/publish`,
			{},
			'application/json'
		);
		expect(JSON.stringify(await published.json())).toContain('Published');
		const extended = await buyer.client.postForm(`/buyer/events/${event.id}?/amend`, {
			summary: 'More time to price the new drawings.',
			description: '',
			deliveryPlace: 'Test town',
			deadlineLocal: toLocalInput(new Date(Date.now() + 2 * 24 * 3600_000), ZONE)
		});
		expect(extended.status).toBe(200);
		const mail = await mailAbout(event.reference, /Amendment 1/);
		expect(mail.text).toMatch(/Bid deadline extended: .*, was /);
		expect((await trailOf(event.id)).entries.map((e) => e.action)).toContain('amendment 1');

		// Past the first deadline, with time for the job to be picked up.
		await untilPast(new Date(first.getTime() + 4000));
		const row = await testDb()('events').where({ id: event.id }).first();
		expect(row).toMatchObject({ state: 'open', opened_at: null });
		expect((await buyer.client.get(`/api/events/${event.id}/bids`, 'application/json')).status).toBe(403);
		const detail = await json(await buyer.client.get(`/api/events/${event.id}`, 'application/json'));
		expect((detail.event as { state: string }).state).toBe('open');
		expect((await trailOf(event.id)).entries.map((e) => e.action)).not.toContain('bids opened');
	});
});

describe('a buyer who brute-forces prices from what is shown before the opening', () => {
	const price = '4.37';
	let eventId: string;
	let reference: string;
	let deadline: Date;
	let bid: Buffer;
	let uploadId: string;

	beforeAll(async () => {
		deadline = new Date(Date.now() + 20_000);
		const event = await anOpenEvent({
			createdBy: buyer.user.id,
			invite: [supplier.organisationId],
			items: 1,
			deadline
		});
		eventId = event.id;
		reference = event.reference;
		bid = await aCsvBid(eventId, price);
		const accepted = await uploadSheet(supplier.client, eventId, bid, 'bid.csv');
		expect(accepted.status).toBe(201);
		uploadId = ((await json(accepted)).upload as { id: string }).id;
		// A rejected upload too: its problem count is derived from the bid.
		expect(
			(await uploadSheet(supplier.client, eventId, await aCsvBid(eventId, 'cheap'), 'bid.csv')).status
		).toBe(422);
	});

	it('finds no hash, size, line or problem count of an upload, and no price by hashing the filled template', async () => {
		expect((await buyer.client.get(`/api/events/${eventId}/bids`, 'application/json')).status).toBe(403);
		const seen = [
			JSON.stringify(await trailOf(eventId)),
			await (await buyer.client.get(`/events/${eventId}/trail`)).text(),
			await (await buyer.client.get(`/api/events/${eventId}/submissions`, 'application/json')).text(),
			await (await buyer.client.get(`/api/events/${eventId}`, 'application/json')).text(),
			await (await buyer.client.get(`/buyer/events/${eventId}/bids`)).text(),
			await (await buyer.client.get(`/buyer/events/${eventId}`)).text()
		].join('\n');
		const sha256 = (bytes: Buffer) => createHash('sha256').update(bytes).digest('hex');
		expect(seen).not.toContain(sha256(bid));
		expect(seen).not.toMatch(/"(bytes|lines|bundles|problems|sha256)":/);
		expect(seen).not.toContain(`:${bid.length}`);
		// The attack of the issue: hash the template filled with every price from 0.01 to 20.00.
		const template = await csvTemplate(eventId);
		expect(filledCsv(template, price).equals(bid)).toBe(true);
		const recovered: string[] = [];
		for (let cents = 1; cents <= 2000; cents++) {
			const candidate = (cents / 100).toFixed(2);
			if (seen.includes(sha256(filledCsv(template, candidate)))) recovered.push(candidate);
		}
		expect(recovered).toEqual([]);
		// The supplier's own receipt keeps the plain SHA-256 of its file.
		expect((await receiptFor(reference)).text).toContain(sha256(bid));
	});

	it('reveals each upload’s salt at the opening, so its commitment verifies against the file', async () => {
		await untilPast(deadline);
		const trail = await trailOf(eventId);
		const actions = trail.entries.map((e) => e.action);
		expect(actions.slice(-2)).toEqual(['bids opened', 'commitments revealed']);
		const accepted = trail.entries.find((e) => e.action === 'upload accepted')!;
		const revealed = trail.entries.at(-1)!.detail as {
			uploads: { upload: string; commitment: string; salt: string }[];
		};
		const mine = revealed.uploads.find((u) => u.upload === uploadId)!;
		expect(mine.commitment).toBe(accepted.detail.commitment);
		expect(verifyCommitment(bid, mine.salt, mine.commitment)).toBe(true);
		expect(verifyCommitment(await aCsvBid(eventId, '4.38'), mine.salt, mine.commitment)).toBe(false);
		expect(revealed.uploads).toHaveLength(2);
	});
});

describe('someone who can read the object store', () => {
	const s3 = () =>
		new S3Client({
			region: process.env.S3_REGION,
			endpoint: process.env.S3_ENDPOINT,
			forcePathStyle: true,
			credentials: {
				accessKeyId: process.env.S3_ACCESS_KEY_ID!,
				secretAccessKey: process.env.S3_SECRET_ACCESS_KEY!
			}
		});
	const stored = async (key: string) => {
		const object = await s3().send(new GetObjectCommand({ Bucket: process.env.S3_BUCKET, Key: key }));
		return { body: Buffer.from(await object.Body!.transformToByteArray()), metadata: object.Metadata ?? {} };
	};
	const storageKeyOf = async (eventId: string) =>
		(
			await testDb()('uploads')
				.where({ event_id: eventId, supplier_organisation_id: supplier.organisationId })
				.orderBy('received_at', 'desc')
				.first('storage_key')
		).storage_key as string;

	it('reads neither prices nor sheet text nor a zip from a stored bid file, while the app’s key opens it', async () => {
		const event = await anOpenEvent({ createdBy: buyer.user.id, invite: [supplier.organisationId] });
		const csv = await aCsvBid(event.id, '987.654');
		expect((await uploadSheet(supplier.client, event.id, csv, 'bid.csv')).status).toBe(201);
		const csvObject = await stored(await storageKeyOf(event.id));
		expect(csvObject.body.includes('987.654')).toBe(false);
		expect(csvObject.body.includes('IT-1')).toBe(false);
		expect(csvObject.body.includes('Test item')).toBe(false);
		expect(JSON.stringify(csvObject.metadata)).not.toContain(createHash('sha256').update(csv).digest('hex'));

		const template = Buffer.from(
			await (await supplier.client.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer()
		);
		const xlsx = await fillSheet(template, { 'IT-1': [987.654], 'IT-2': [1], 'IT-3': [2] });
		expect((await uploadSheet(supplier.client, event.id, xlsx)).status).toBe(201);
		const key = await storageKeyOf(event.id);
		const xlsxObject = await stored(key);
		expect(xlsxObject.body.subarray(0, 2).toString('latin1')).not.toBe('PK');
		expect(xlsxObject.body.includes(Buffer.from('PK\x03\x04', 'latin1'))).toBe(false);
		expect(xlsxObject.body.includes(xlsx.subarray(0, 64))).toBe(false);

		const keys = parseBidFileKeys(process.env.BID_FILE_KEYS!);
		expect(Buffer.compare(openSealedFile(xlsxObject.body, key, keys), xlsx)).toBe(0);
	});

	it('keeps a file readable through a key rotation: re-wrapped under the new key, opened after the old one is retired', async () => {
		const event = await anOpenEvent({ createdBy: buyer.user.id, invite: [supplier.organisationId] });
		const csv = await aCsvBid(event.id, '12.5');
		expect((await uploadSheet(supplier.client, event.id, csv, 'bid.csv')).status).toBe(201);
		const key = await storageKeyOf(event.id);
		const oldKeys = process.env.BID_FILE_KEYS!;
		expect(sealedKeyId((await stored(key)).body)).toBe(oldKeys.split(':')[0]);

		const newKey = `rotated:${randomBytes(32).toString('base64')}`;
		const run = spawnSync(
			process.execPath,
			['--import', 'tsx', 'scripts/rotate-bid-file-keys.ts', '--event', event.id],
			{ env: { ...process.env, BID_FILE_KEYS: `${newKey},${oldKeys}` }, encoding: 'utf8' }
		);
		expect(run.status, run.stderr).toBe(0);
		expect(run.stdout).toContain('1 re-wrapped');
		const rotated = (await stored(key)).body;
		expect(sealedKeyId(rotated)).toBe('rotated');
		expect(Buffer.compare(openSealedFile(rotated, key, parseBidFileKeys(newKey)), csv)).toBe(0);
	});
});

// Issue 14's rounds and rates, tried as whoever sends SQL with the app's credentials (testDb connects as
// the app's role): the seal of a round and the rate lock are held by triggers, not only by the services.
describe('someone who writes to the rounds in SQL through the app’s own connection', () => {
	const revised = '3.21';
	let eventId: string;

	/** The rounds and the unit prices of revisions the database lets the buying organisation read now. */
	const buyerSees = async () => {
		const rounds = (
			await testDb().raw('select round from visible_bid_revisions(?, ?, now())', [
				eventId,
				buyer.organisationId
			])
		).rows as { round: number }[];
		const prices = (
			await testDb().raw('select unit_price from sealed_bid_lines(?, ?, now())', [
				eventId,
				buyer.organisationId
			])
		).rows as { unit_price: string }[];
		return {
			rounds: [...new Set(rounds.map((r) => r.round))].sort(),
			prices: [...new Set(prices.map((p) => Number(p.unit_price)))]
		};
	};

	beforeAll(async () => {
		const deadline = new Date(Date.now() + 8_000);
		const event = await anOpenEvent({
			createdBy: buyer.user.id,
			invite: [supplier.organisationId],
			deadline
		});
		eventId = event.id;
		expect(
			(await uploadSheet(supplier.client, eventId, await aCsvBid(eventId, '4.37'), 'bid.csv')).status
		).toBe(201);
		await untilPast(deadline);
		const started = await post(buyer.client, `/api/events/${eventId}/rounds`, {
			suppliers: [supplier.organisationId],
			deadline: new Date(Date.now() + 3_600_000).toISOString(),
			feedback: 'rank',
			per: 'item'
		});
		expect(started.status).toBe(201);
		expect(
			(await uploadSheet(supplier.client, eventId, await aCsvBid(eventId, revised), 'bid.csv')).status
		).toBe(201);
		expect(
			await testDb()('bid_revisions').where({ event_id: eventId, round: 2 }).select('number')
		).toHaveLength(1);
		expect(await buyerSees()).toEqual({ rounds: [1], prices: [4.37] });
	}, 60_000);

	it('cannot move a round-2 revision into round 1, nor change a revision’s currency or source', async () => {
		// The app's role may not update a revision at all (migration 20261210010000); the trigger
		// bid_revisions_keep_their_round stands behind it for whoever else may write.
		await expect(
			testDb()('bid_revisions').where({ event_id: eventId, round: 2 }).update({ round: 1 })
		).rejects.toThrow(/permission denied/);
		// A bid of 4.37 EUR read as 4.37 of another currency, or turned into a withdrawal: refused too.
		await expect(
			testDb()('bid_revisions').where({ event_id: eventId, round: 1 }).update({ currency: 'GBP' })
		).rejects.toThrow(/permission denied/);
		await expect(
			testDb()('bid_revisions').where({ event_id: eventId, round: 1 }).update({ source: 'withdrawal' })
		).rejects.toThrow(/permission denied/);
		expect(await buyerSees()).toEqual({ rounds: [1], prices: [4.37] });
	});

	it('cannot delete the open round, nor renumber it, nor insert it again with its deadline passed', async () => {
		const round = await testDb()('bid_rounds').where({ event_id: eventId, number: 2 }).first();
		await expect(testDb()('bid_rounds').where({ id: round.id }).delete()).rejects.toThrow(/never deleted/);
		await expect(testDb()('bid_rounds').where({ id: round.id }).update({ number: 3 })).rejects.toThrow(
			/keeps its event and number/
		);
		const { id: _id, opened_at: _opened, ...fields } = round as Record<string, unknown>;
		// The deletion is refused, so the insert also meets the unique (event, number); the trigger answers
		// first, which is what would stop the attack had the row gone.
		await expect(
			testDb()('bid_rounds').insert({ ...fields, deadline: new Date(Date.now() - 1000) })
		).rejects.toThrow(/deadline must be in the future/);
		await expect(
			testDb()('bid_rounds').insert({ ...fields, number: 3, deadline: new Date(Date.now() - 1000) })
		).rejects.toThrow(/deadline must be in the future/);
		// Nor a round 3 beside the open round 2, nor a revision in a round that does not exist.
		await expect(
			testDb()('bid_rounds').insert({ ...fields, number: 3, deadline: new Date(Date.now() + 7_200_000) })
		).rejects.toThrow(/previous one has closed/);
		await expect(
			testDb()('bid_revisions').insert({
				event_id: eventId,
				supplier_organisation_id: supplier.organisationId,
				number: 99,
				source: 'screen',
				submitted_by: supplier.user.id,
				submitted_at: new Date(),
				round: 3
			})
		).rejects.toThrow(/made only while that round is open/);
		expect(await testDb()('bid_rounds').where({ event_id: eventId })).toHaveLength(1);
		expect(await buyerSees()).toEqual({ rounds: [1], prices: [4.37] });
	});

	it('cannot move the sealed round-2 line into the round-1 revision, rewrite a price, or delete a bid', async () => {
		const revisions = await testDb()('bid_revisions')
			.where({ event_id: eventId })
			.orderBy('round')
			.select('id', 'round');
		const [first, second] = revisions as { id: string; round: number }[];
		// The revised price (3.21, sealed until round 2's deadline) moved into the opened revision of round 1,
		// or round 1's price rewritten to it: the buyer would read it before the deadline. Both refused.
		await expect(
			testDb()('bid_lines').where({ revision_id: second!.id }).update({ revision_id: first!.id })
		).rejects.toThrow(/permission denied/);
		await expect(
			testDb()('bid_lines').where({ revision_id: first!.id }).update({ unit_price: revised })
		).rejects.toThrow(/permission denied/);
		// Nor may a line, a price break, an answer or a whole revision be deleted to change what counts.
		for (const table of [
			'bid_lines',
			'price_breaks',
			'bundle_offers',
			'bundle_offer_items',
			'bid_criterion_answers'
		])
			await expect(testDb()(table).where(testDb().raw('false')).delete(), table).rejects.toThrow(
				/permission denied/
			);
		await expect(testDb()('bid_revisions').where({ id: second!.id }).delete()).rejects.toThrow(
			/permission denied/
		);
		expect(await buyerSees()).toEqual({ rounds: [1], prices: [4.37] });
	});
});

describe('someone who changes a rate in SQL through the app’s own connection', () => {
	it('needs an amendment naming rates, made while the event is open before its deadline', async () => {
		const deadline = new Date(Date.now() + 6_000);
		const event = await anOpenEvent({
			createdBy: buyer.user.id,
			invite: [supplier.organisationId],
			deadline
		});
		const rates = (rate: number) => ({
			event_id: event.id,
			currency: 'USD',
			rate,
			source: 'ECB',
			rate_date: '2026-12-01'
		});
		const amendment = (number: number, detail: Record<string, unknown>) => ({
			event_id: event.id,
			number,
			summary: 'Rates.',
			detail: JSON.stringify(detail),
			created_by: buyer.user.id
		});
		// As amend() does it, before the deadline: accepted.
		await testDb().transaction(async (trx) => {
			await trx('amendments').insert(amendment(1, { rates: { before: [], after: [] } }));
			await trx('event_rates').insert(rates(0.92));
		});
		// A dummy amendment that names no rates: refused.
		await expect(
			testDb().transaction(async (trx) => {
				await trx('amendments').insert(amendment(2, { description: { before: '', after: 'x' } }));
				await trx('event_rates').where({ event_id: event.id }).update({ rate: 0.5 });
			})
		).rejects.toThrow(/change only by an amendment/);
		// After the deadline, even beside an amendment naming rates: refused.
		await untilPast(deadline);
		await expect(
			testDb().transaction(async (trx) => {
				await trx('amendments').insert(amendment(2, { rates: { before: [], after: [] } }));
				await trx('event_rates').where({ event_id: event.id }).update({ rate: 0.5 });
			})
		).rejects.toThrow(/only while it is open, before its deadline/);
		const stored = await testDb()('event_rates').where({ event_id: event.id });
		expect(stored.map((r: { rate: string }) => Number(r.rate))).toEqual([0.92]);
		expect(await testDb()('amendments').where({ event_id: event.id })).toHaveLength(1);
	}, 30_000);
});
