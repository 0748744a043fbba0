// Finding 7 of issue 9, tried as an attacker would: with the app's own database credentials (a leaked
// DATABASE_URL, an injected query), and as the owner of the database (a hostile administrator).
import knex, { type Knex } from 'knex';
import { afterAll, describe, expect, it } from 'vitest';
import { entryHash, entryMac, listTrail, macKey, type TrailEntry } from '../../src/lib/server/trail';
import { databaseOwnerUrl } from '../support/env';
import {
	aSignedInUser,
	aSupplierOrganisationWithUser,
	anOpenEvent,
	fillSheet,
	signedIn,
	uploadSheet
} from '../support/events';
import { closeTestDb, testDb } from '../support/factories';
import { latestMailTo } from '../support/mail';

const owner = knex({ client: 'pg', connection: databaseOwnerUrl(), pool: { min: 0, max: 2 } });

afterAll(async () => {
	await closeTestDb();
	await owner.destroy();
});

interface TrailAnswer {
	verification: {
		intact: boolean;
		entries: number;
		firstBroken?: number;
		reason?: string;
		anchoredTo: number;
		unanchored: number;
		text: string;
	};
	entries: { seq: number; hash: string }[];
}

type Client = Awaited<ReturnType<typeof aSignedInUser>>['client'];

const trailOf = async (client: Client, id: string) =>
	(await (await client.get(`/api/events/${id}/trail`, 'application/json')).json()) as TrailAnswer;

/** An open event whose supplier has uploaded twice, each upload anchored outside the database. */
async function anAnchoredTrail() {
	const buyer = await aSignedInUser('buyer');
	const { organisation, user } = await aSupplierOrganisationWithUser();
	const supplier = await signedIn(user);
	const event = await anOpenEvent({ createdBy: buyer.user.id, invite: [organisation.id] });
	const sheet = Buffer.from(await (await supplier.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer());
	for (const price of [2, 1.9, 1.8])
		expect((await uploadSheet(supplier, event.id, await fillSheet(sheet, { 'IT-1': [price] }))).status).toBe(
			201
		);
	// The checkpoint is written just after the commit: wait for it, as an attacker would have to.
	const deadline = Date.now() + 10_000;
	let trail = await trailOf(buyer.client, event.id);
	while (trail.verification.unanchored > 0 && Date.now() < deadline) {
		await new Promise((r) => setTimeout(r, 100));
		trail = await trailOf(buyer.client, event.id);
	}
	expect(trail.verification).toMatchObject({ intact: true, entries: 3, unanchored: 0 });
	return { buyer, supplier, user, event };
}

/** What a database owner can do: switch the append-only trigger off for one change. */
async function asOwnerWithoutTrigger(work: (trx: Knex.Transaction) => Promise<void>) {
	await owner.transaction(async (trx) => {
		await trx.raw('alter table trail_entries disable trigger trail_entries_no_change');
		await work(trx);
		await trx.raw('alter table trail_entries enable trigger trail_entries_no_change');
	});
}

/** Rewrites entry `at` and recomputes every later hash, optionally re-signing with a key. */
async function rewriteFrom(eventId: string, at: number, signWith?: string) {
	const entries = await listTrail(owner, eventId);
	let previous = entries[at - 2]?.hash ?? null;
	await asOwnerWithoutTrigger(async (trx) => {
		for (const entry of entries.slice(at - 1)) {
			const body: Omit<TrailEntry, 'hash' | 'mac' | 'mac_key_id'> = {
				...entry,
				detail: entry.seq === at ? { ...entry.detail, supplier: 'someone else' } : entry.detail,
				previous_hash: previous
			};
			const hash = entryHash(body);
			await trx('trail_entries')
				.where({ event_id: eventId, seq: entry.seq })
				.update({
					detail: JSON.stringify(body.detail),
					previous_hash: previous,
					hash,
					...(signWith ? { mac: entryMac(macKey(signWith), hash) } : {})
				});
			previous = hash;
		}
	});
}

/** An owner's forged "bids opened" entry after the last one, chained correctly, signed with `key`. */
async function appendForged(eventId: string, key: string) {
	const last = (await listTrail(owner, eventId)).at(-1)!;
	const body: Omit<TrailEntry, 'hash' | 'mac' | 'mac_key_id'> = {
		event_id: eventId,
		seq: last.seq + 1,
		at: new Date(last.at.getTime() + 1000),
		actor_user_id: null,
		actor: 'Tenderloom (system)',
		action: 'bids opened',
		detail: { reason: 'deadline job' },
		previous_hash: last.hash
	};
	const hash = entryHash(body);
	const signing = macKey(key);
	await owner('trail_entries').insert({
		...body,
		detail: JSON.stringify(body.detail),
		hash,
		mac: entryMac(signing, hash),
		// The real key's id, so the entry is checked against the real key.
		mac_key_id: last.mac_key_id
	});
}

describe("the decision trail against the app's own database credentials", () => {
	it('refuses UPDATE, DELETE and TRUNCATE of trail entries with permission denied', async () => {
		const { event } = await anAnchoredTrail();
		const rows = () => testDb()('trail_entries').where({ event_id: event.id });
		await expect(rows().update({ action: 'nothing happened' })).rejects.toThrow(
			/permission denied for table trail_entries/
		);
		await expect(rows().delete()).rejects.toThrow(/permission denied for table trail_entries/);
		await expect(testDb().raw('truncate trail_entries')).rejects.toThrow(
			/permission denied for table trail_entries/
		);
		await expect(
			testDb().raw('alter table trail_entries disable trigger trail_entries_no_change')
		).rejects.toThrow(/must be owner of table trail_entries/);
		expect(await rows().count({ n: '*' }).first()).toEqual({ n: '3' });
	});

	it('connects as a role that is no superuser, cannot make roles or databases and owns nothing', async () => {
		const role = (
			await testDb().raw(
				`select rolname, rolsuper, rolcreaterole, rolcreatedb, rolbypassrls from pg_roles where rolname = current_user`
			)
		).rows[0];
		expect(role).toMatchObject({
			rolsuper: false,
			rolcreaterole: false,
			rolcreatedb: false,
			rolbypassrls: false
		});
		expect(role.rolname).not.toBe(new URL(databaseOwnerUrl()).username);
		const owned = (
			await testDb().raw(`
				select (select count(*) from pg_class where relowner = r.oid)
					+ (select count(*) from pg_namespace where nspowner = r.oid)
					+ (select count(*) from pg_proc where proowner = r.oid)
					+ (select count(*) from pg_type where typowner = r.oid)
					+ (select count(*) from pg_database where datdba = r.oid) as n
				from pg_roles r where r.rolname = current_user`)
		).rows[0].n;
		expect(Number(owned)).toBe(0);
	});
});

describe('the decision trail against a hostile database owner', () => {
	it('reports the newest entry deleted by the owner as removed, naming the checkpoint', async () => {
		const { buyer, event } = await anAnchoredTrail();
		await asOwnerWithoutTrigger(async (trx) => {
			await trx('trail_entries').where({ event_id: event.id, seq: 3 }).delete();
		});
		const { verification } = await trailOf(buyer.client, event.id);
		expect(verification).toMatchObject({ intact: false, entries: 2, firstBroken: 3 });
		expect(verification.text).toMatch(
			/^broken after entry 2: entry 3 was removed \(a checkpoint written at \S+ outside the database records entry 3\)$/
		);
		const page = await (await buyer.client.get(`/events/${event.id}/trail`)).text();
		expect(page).toContain('The chain is broken');
		expect(page).not.toContain('cannot be changed or removed');
	});

	it('finds an entry the owner appended with a correct chain hash but without the signing key', async () => {
		const { buyer, event } = await anAnchoredTrail();
		await appendForged(event.id, 'the attacker guesses a key of 32 characters');
		const { verification } = await trailOf(buyer.client, event.id);
		expect(verification).toMatchObject({
			intact: false,
			entries: 4,
			firstBroken: 4,
			reason: "entry 4 does not carry Tenderloom's signature: it was forged or rewritten outside Tenderloom"
		});
	});

	it('reports an entry appended by an owner who also holds the signing key as not anchored', async () => {
		const { buyer, event } = await anAnchoredTrail();
		await appendForged(event.id, process.env.TRAIL_MAC_KEY!);
		const { verification } = await trailOf(buyer.client, event.id);
		expect(verification).toMatchObject({ intact: true, entries: 4, anchoredTo: 3, unanchored: 1 });
		expect(verification.text).toBe(
			'intact, 4 entries; entry 4 is not yet anchored outside the database (checkpoint at entry 3)'
		);
	});

	it('finds an entry the owner rewrote with every later hash recomputed', async () => {
		const { buyer, event } = await anAnchoredTrail();
		await rewriteFrom(event.id, 2);
		const { verification } = await trailOf(buyer.client, event.id);
		expect(verification).toMatchObject({
			intact: false,
			firstBroken: 2,
			reason: "entry 2 does not carry Tenderloom's signature: it was forged or rewritten outside Tenderloom"
		});
	});

	it('finds a rewrite by an owner who also holds the signing key, against the checkpoint', async () => {
		const { buyer, event } = await anAnchoredTrail();
		await rewriteFrom(event.id, 2, process.env.TRAIL_MAC_KEY);
		const { verification } = await trailOf(buyer.client, event.id);
		expect(verification).toMatchObject({ intact: false, firstBroken: 3 });
		expect(verification.reason).toMatch(
			/^entry 3 differs from its checkpoint written at \S+: the trail was rewritten at or before entry 3$/
		);
	});
});

describe('the trail head outside the database', () => {
	const headIn = (text: string) =>
		/Decision trail of \S+ at this moment: newest entry SHA-256 ([0-9a-f]{64})\./.exec(text)?.[1];

	it("puts the hash of the trail's newest entry into the bid receipt the supplier keeps", async () => {
		const buyer = await aSignedInUser('buyer');
		const { organisation, user } = await aSupplierOrganisationWithUser();
		const supplier = await signedIn(user);
		const event = await anOpenEvent({ createdBy: buyer.user.id, invite: [organisation.id] });
		const sheet = Buffer.from(await (await supplier.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer());
		const before = new Date();
		expect((await uploadSheet(supplier, event.id, await fillSheet(sheet, { 'IT-1': [2] }))).status).toBe(201);
		const receipt = await latestMailTo(user.email, { after: before });
		expect(receipt.subject).toMatch(/^Bid received/);
		const hash = headIn(receipt.text);
		expect(hash, receipt.text).toBeDefined();
		const { entries } = await trailOf(buyer.client, event.id);
		expect(entries.at(-1)?.hash).toBe(hash);
	});

	// The head's number counted every entry, so a supplier comparing two of its receipts learnt how many
	// bids and withdrawals other suppliers made in between, while the bids are sealed.
	it('tells a supplier nothing of the bids others made between two of its receipts', async () => {
		const buyer = await aSignedInUser('buyer');
		const [a, b] = [await aSupplierOrganisationWithUser(), await aSupplierOrganisationWithUser()];
		const event = await anOpenEvent({
			createdBy: buyer.user.id,
			invite: [a.organisation.id, b.organisation.id]
		});
		const bid = async (who: typeof a, price: number) => {
			const client = await signedIn(who.user);
			const sheet = Buffer.from(await (await client.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer());
			const before = new Date();
			expect((await uploadSheet(client, event.id, await fillSheet(sheet, { 'IT-1': [price] }))).status).toBe(
				201
			);
			return latestMailTo(who.user.email, { after: before });
		};
		const first = await bid(a, 3);
		await bid(b, 2.9);
		await bid(b, 2.8);
		const second = await bid(a, 2.7);
		for (const receipt of [first, second]) {
			expect(headIn(receipt.text), receipt.text).toBeDefined();
			expect(receipt.text).not.toMatch(/\bentry \d/);
			expect(receipt.html).not.toMatch(/\bentry \d/);
		}
	});
});
