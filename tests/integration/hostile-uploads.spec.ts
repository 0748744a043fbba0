// Hostile bid files (tests/fixtures/hostile/generate.ts) sent by an invited supplier through the
// upload API of the built server, while the health check is polled: each file is refused, or answered,
// with the message a supplier needs, the supplier's previous bid stays as it was, and the server keeps
// answering. Then the limits on how much one supplier may upload; then uploads that die half-way or
// come too late, with real faults (a process killed, a request aborted, the deadline passing while the
// upload waits): in the end, no object in the store for this file's events without an upload keeping it.
import { spawn } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { ListObjectsV2Command, S3Client } from '@aws-sdk/client-s3';
import ExcelJS from 'exceljs';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { closeDb } from '../../src/lib/server/db/knex';
import { sweepUploadOrphans } from '../../src/lib/server/services/upload-sweep';
import { hostileCorpus, type HostileFile } from '../fixtures/hostile/generate';
import { appUrl } from '../support/env';
import {
	aSignedInUser,
	aSupplierOrganisationWithUser,
	anOpenEvent,
	signedIn,
	untilPast,
	uploadSheet
} from '../support/events';
import { closeTestDb, testDb, type TestUser } from '../support/factories';
import type { Browserless } from '../support/http';

afterAll(async () => {
	await closeTestDb();
	await closeDb();
});

/** Every event this file makes: at its end, each object stored under them must belong to an upload. */
const eventsMade: string[] = [];

const s3 = new S3Client({
	region: process.env.S3_REGION,
	endpoint: process.env.S3_ENDPOINT,
	forcePathStyle: true,
	credentials: {
		accessKeyId: process.env.S3_ACCESS_KEY_ID ?? '',
		secretAccessKey: process.env.S3_SECRET_ACCESS_KEY ?? ''
	}
});

/** The keys of the objects stored under a prefix, straight from the S3 fake. */
async function storedKeys(prefix: string): Promise<string[]> {
	const page = await s3.send(new ListObjectsV2Command({ Bucket: process.env.S3_BUCKET, Prefix: prefix }));
	return (page.Contents ?? []).map((o) => o.Key!);
}

async function until<T>(what: string, check: () => Promise<T | undefined>, seconds = 20): Promise<T> {
	for (let k = 0; k < seconds * 10; k++) {
		const found = await check();
		if (found !== undefined) return found;
		await new Promise((r) => setTimeout(r, 100));
	}
	throw new Error(`${what}: not within ${seconds} s`);
}

const json = async (response: Response) => (await response.json()) as Record<string, unknown>;
type Problem = { sheet: string; row: number | null; column: string | null; message: string };

const VALID_BID = Buffer.from(
	[
		'Item ref,Description,Lot,Unit,Quantity,Unit price (EUR)',
		'IT-1,Test item 1,L1,C62,100,3.1',
		'IT-2,Test item 2,L1,C62,200,4.2',
		'IT-3,Test item 3,L1,C62,300,5.3'
	].join('\r\n')
);

/** Runs `work` while asking /healthz every 100 ms; every answer's time in ms (Infinity for none). */
async function whileWatchingHealth<T>(work: () => Promise<T>): Promise<{ result: T; latencies: number[] }> {
	const latencies: number[] = [];
	let done = false;
	const poll = (async () => {
		while (!done) {
			const start = performance.now();
			try {
				const response = await fetch(`${appUrl()}/healthz`, { signal: AbortSignal.timeout(15_000) });
				await response.text();
				latencies.push(response.ok ? performance.now() - start : Infinity);
			} catch {
				latencies.push(Infinity);
			}
			await new Promise((resolve) => setTimeout(resolve, 100));
		}
	})();
	try {
		return { result: await work(), latencies };
	} finally {
		done = true;
		await poll;
	}
}

interface Supplier {
	user: TestUser;
	client: Browserless;
	organisationId: string;
}

async function aSupplierInvitedTo(buyerId: number): Promise<Supplier & { eventId: string }> {
	const { organisation, user } = await aSupplierOrganisationWithUser();
	const event = await anOpenEvent({ createdBy: buyerId, invite: [organisation.id] });
	eventsMade.push(event.id);
	return { user, client: await signedIn(user), organisationId: organisation.id, eventId: event.id };
}

let buyerId: number;
beforeAll(async () => {
	buyerId = (await aSignedInUser('buyer')).user.id;
});

describe('a hostile bid file', () => {
	let corpus: Record<string, HostileFile>;
	let own: Supplier & { eventId: string };

	beforeAll(async () => {
		[corpus, own] = await Promise.all([hostileCorpus(), aSupplierInvitedTo(buyerId)]);
		expect((await uploadSheet(own.client, own.eventId, VALID_BID, 'bid.csv')).status).toBe(201);
	}, 60_000);

	async function expectFirstBidIntact() {
		const bids = await json(await own.client.get(`/api/events/${own.eventId}/bids`, 'application/json'));
		const [bid] = bids.bids as { revision: number; lines: { item: string; unitPrice: number }[] }[];
		expect(bid!.revision).toBe(1);
		expect(bid!.lines.map((l) => [l.item, l.unitPrice])).toEqual([
			['IT-1', 3.1],
			['IT-2', 4.2],
			['IT-3', 5.3]
		]);
	}

	/** Uploads one file of the corpus while watching the health check; the problems the supplier is shown. */
	async function send(name: string) {
		const file = corpus[name]!;
		const { result, latencies } = await whileWatchingHealth(() =>
			uploadSheet(own.client, own.eventId, file.bytes, file.fileName)
		);
		expect(latencies.length).toBeGreaterThan(0);
		expect(
			Math.max(...latencies),
			`health check answers (ms): ${latencies.map(Math.round).join(', ')}`
		).toBeLessThan(1000);
		expect(result.status).toBe(422);
		const body = await json(result);
		await expectFirstBidIntact();
		return { problems: body.problems as Problem[], problemCount: body.problemCount as number };
	}

	it('refuses a 2 KB workbook with one cell in row 1,048,576, naming the sheet and the row, without stalling the server', async () => {
		const { problems } = await send('farRow');
		expect(problems).toHaveLength(1);
		expect(problems[0]!.message).toMatch(
			/^The sheet "Prices" reaches row 1,048,576; a bid sheet for this event has at most 1,004 rows\. It was not opened\./
		);
	});

	it('refuses a zip bomb that expands past 50 MB', async () => {
		const { problems } = await send('zipBomb');
		expect(problems[0]!.message).toMatch(/expands to more than 50\.0 MB when unpacked/);
	});

	it('refuses a 200,000-row CSV by its line count, with one problem instead of 200,000', async () => {
		const { problems, problemCount } = await send('rows200k');
		expect(problemCount).toBe(1);
		expect(problems).toHaveLength(1);
		expect(problems[0]!.message).toMatch(
			/^The file has 200,001 lines; a bid sheet for this event has at most 1,004 \(a header, one line per item and room to spare\)\./
		);
	});

	it('refuses a macro workbook renamed .xlsx', async () => {
		const { problems } = await send('macro');
		expect(problems[0]!.message).toMatch(
			/contains macros .*Save the bid sheet as a plain \.xlsx without macros/
		);
	});

	it('refuses a UTF-16 CSV and says to save it as CSV UTF-8 (comma delimited)', async () => {
		const { problems } = await send('utf16');
		expect(problems[0]!.message).toMatch(/saved as Unicode \(UTF-16\) text/);
		expect(problems[0]!.message).toMatch(
			/choose "Save as", pick "CSV UTF-8 \(comma delimited\)" as the type/
		);
	});

	it('refuses a semicolon-separated CSV and says to save it as CSV UTF-8 (comma delimited)', async () => {
		const { problems } = await send('semicolon');
		expect(problems[0]!.message).toMatch(/separated by semicolons, not commas/);
		expect(problems[0]!.message).toMatch(
			/choose "Save as", pick "CSV UTF-8 \(comma delimited\)" as the type/
		);
	});

	it('refuses a PDF renamed .xlsx or .csv as a PDF', async () => {
		for (const name of ['pdfAsXlsx', 'pdfAsCsv']) {
			const { problems } = await send(name);
			expect(problems[0]!.message).toMatch(/^This is a PDF document, not a bid sheet\./);
		}
	});

	it('sends and keeps the first 100 of 600 problems with their total, and the page says so', async () => {
		const { problems, problemCount } = await send('manyProblems');
		expect(problems).toHaveLength(100);
		expect(problemCount).toBe(600);
		expect(problems[0]).toMatchObject({
			sheet: 'CSV',
			row: 2,
			column: 'A',
			message: '"NOPE-0" is not an item of this event'
		});
		const stored = await testDb()('uploads')
			.where({ event_id: own.eventId, supplier_organisation_id: own.organisationId })
			.orderBy('received_at', 'desc')
			.first();
		expect(stored.report).toHaveLength(100);
		expect(stored.problem_count).toBe(600);
		const page = await (await own.client.get(`/supplier/events/${own.eventId}`)).text();
		expect(page).toContain('Showing the first 100 of 600 problems.');
	});
});

describe("the supplier's page after many or large reports", () => {
	it('is not sent whole again: the page shows the first 100 of its 5,000 problems', async () => {
		const own = await aSupplierInvitedTo(buyerId);
		const report = Array.from({ length: 5_000 }, (_, k) => ({
			sheet: 'CSV',
			row: k + 2,
			column: 'A',
			message: `problem number ${k}`
		}));
		await testDb()('uploads').insert({
			event_id: own.eventId,
			supplier_organisation_id: own.organisationId,
			uploaded_by: own.user.id,
			storage_key: `uploads/${own.eventId}/${own.organisationId}/old`,
			sha256: '0'.repeat(64),
			size_bytes: 100_000,
			file_name: 'old.csv',
			kind: 'csv',
			status: 'rejected',
			report: JSON.stringify(report)
		});
		const page = await (await own.client.get(`/supplier/events/${own.eventId}`)).text();
		expect(page).toContain('Showing the first 100 of 5,000 problems.');
		expect(page).toContain('problem number 99');
		expect(page).not.toMatch(/problem number 100\b/);
		expect(page).not.toContain('problem number 4999');
	});

	it('shows the latest 50 uploads of 55, saying so', async () => {
		const own = await aSupplierInvitedTo(buyerId);
		await testDb()('uploads').insert(
			Array.from({ length: 55 }, (_, k) => ({
				event_id: own.eventId,
				supplier_organisation_id: own.organisationId,
				uploaded_by: own.user.id,
				storage_key: `uploads/${own.eventId}/${own.organisationId}/${k}`,
				sha256: '0'.repeat(64),
				size_bytes: 10,
				file_name: `try-${k}.csv`,
				kind: 'csv',
				status: 'rejected',
				report: '[]',
				received_at: new Date(Date.now() - (55 - k) * 60_000)
			}))
		);
		const page = await (await own.client.get(`/supplier/events/${own.eventId}`)).text();
		expect(page).toContain('Showing the latest 50 of 55 uploads.');
		expect(page).toContain('try-54.csv');
		expect(page).not.toMatch(/try-4\.csv/);
	});
});

describe('a large item list', () => {
	// The import at its largest (MAX_ITEMS), end to end through the parse thread, with the server answering
	// throughout. (It was read on the event loop before; exceljs yields while loading, so this alone did not
	// show that: read-bid-file.spec.ts checks the thread's memory cap for item lists.)
	it('is read on a worker thread: the server keeps answering while 20,000 items are imported', async () => {
		const buyer = await aSignedInUser('buyer');
		const draft = await anOpenEvent({ createdBy: buyer.user.id, invite: [], items: 1, state: 'draft' });
		eventsMade.push(draft.id);
		const workbook = new ExcelJS.Workbook();
		const sheet = workbook.addWorksheet('Items');
		sheet.addRow(['Ref', 'Description', 'Lot', 'Quantity', 'Unit', 'Baseline unit price']);
		for (let k = 1; k <= 20_000; k++)
			sheet.addRow([`R-${k}`, `Item ${k}`, `L${(k % 4) + 1}`, 100 + k, 'C62', 2.5]);
		const form = new FormData();
		form.append('file', new Blob([new Uint8Array(await workbook.xlsx.writeBuffer())]), 'items.xlsx');
		const { result, latencies } = await whileWatchingHealth(() =>
			buyer.client.request(`/buyer/events/${draft.id}/items?/import`, {
				method: 'POST',
				body: form,
				accept: 'application/json'
			})
		);
		const answer = (await result.json()) as { type: string; data: string };
		expect(answer.type).toBe('success');
		expect(answer.data).toContain('Saved 20000 items.');
		expect(latencies.length).toBeGreaterThan(0);
		expect(
			Math.max(...latencies),
			`health check answers (ms): ${latencies.map(Math.round).join(', ')}`
		).toBeLessThan(1000);
		const stored = await testDb()('items').where({ event_id: draft.id }).count<{ count: string }[]>('id');
		expect(Number(stored[0]!.count)).toBe(20_000);
	}, 180_000);
});

describe('upload limits of one supplier organisation', () => {
	const perWindow = Number(process.env.UPLOAD_LIMIT_PER_SUPPLIER ?? 20);

	it(`refuses upload number ${perWindow + 1} within 10 minutes with 429, the limit and when to try again`, async () => {
		const own = await aSupplierInvitedTo(buyerId);
		for (let k = 0; k < perWindow; k++)
			expect((await uploadSheet(own.client, own.eventId, Buffer.from('x'), 'bid.csv')).status).toBe(422);
		const refused = await uploadSheet(own.client, own.eventId, VALID_BID, 'bid.csv');
		expect(refused.status).toBe(429);
		expect(Number(refused.headers.get('retry-after'))).toBeGreaterThan(0);
		expect((await json(refused)).message).toMatch(
			new RegExp(
				`^Your organisation has uploaded ${perWindow} files to this event within 10 minutes, the most allowed\\. Try again in \\d+ (minutes?|seconds?)\\. This file was not stored; your current bid is unchanged\\.$`
			)
		);
		const stored = await testDb()('uploads')
			.where({ event_id: own.eventId })
			.count<{ count: string }[]>('id');
		expect(Number(stored[0]!.count)).toBe(perWindow);
		const bids = await json(await own.client.get(`/api/events/${own.eventId}/bids`, 'application/json'));
		expect(bids.bids).toEqual([]);
		// The refusal is on the trail once per window, however often the supplier tries again.
		expect((await uploadSheet(own.client, own.eventId, VALID_BID, 'bid.csv')).status).toBe(429);
		const refusals = await testDb()('trail_entries')
			.where({ event_id: own.eventId, action: 'upload refused' })
			.select('detail');
		const { name } = await testDb()('organisations').where({ id: own.organisationId }).first('name');
		expect(refusals.map((r: { detail: unknown }) => r.detail)).toEqual([
			{ supplier: name, reason: `more than ${perWindow} uploads within 10 minutes` }
		]);
	}, 120_000);

	it('refuses a file that would take the stored uploads past the quota with 413, before storing it', async () => {
		const own = await aSupplierInvitedTo(buyerId);
		const quota = Number(process.env.UPLOAD_QUOTA_MB ?? 100) * 1024 * 1024;
		await testDb()('uploads').insert({
			event_id: own.eventId,
			supplier_organisation_id: own.organisationId,
			uploaded_by: own.user.id,
			storage_key: `uploads/${own.eventId}/${own.organisationId}/earlier`,
			sha256: '0'.repeat(64),
			size_bytes: quota - 50,
			file_name: 'earlier.xlsx',
			kind: 'xlsx',
			status: 'rejected',
			report: '[]'
		});
		const refused = await uploadSheet(own.client, own.eventId, VALID_BID, 'bid.csv');
		expect(refused.status).toBe(413);
		expect((await json(refused)).message).toMatch(
			/^Your organisation's uploads to this event take 100\.0 MB of the 100\.0 MB allowed; this file \(1 KB\) would go over it\. It was not stored; your current bid is unchanged\./
		);
		const stored = await testDb()('uploads')
			.where({ event_id: own.eventId })
			.count<{ count: string }[]>('id');
		expect(Number(stored[0]!.count)).toBe(1);
		const bids = await json(await own.client.get(`/api/events/${own.eventId}/bids`, 'application/json'));
		expect(bids.bids).toEqual([]);
		// On the trail, without the file's size (sizes are never shown before the opening).
		const refusals = await testDb()('trail_entries')
			.where({ event_id: own.eventId, action: 'upload refused' })
			.select('detail');
		const { name } = await testDb()('organisations').where({ id: own.organisationId }).first('name');
		expect(refusals.map((r: { detail: unknown }) => r.detail)).toEqual([
			{ supplier: name, reason: 'the storage quota for its uploads to this event was reached' }
		]);
	});
});

describe('an upload that dies half-way or comes too late', () => {
	/** A signed-in supplier, and an event it is invited to whose deadline is `seconds` ahead. */
	async function aSupplierBefore(seconds: number) {
		const { organisation, user } = await aSupplierOrganisationWithUser();
		const client = await signedIn(user);
		const deadline = new Date(Date.now() + seconds * 1000);
		const event = await anOpenEvent({ createdBy: buyerId, invite: [organisation.id], deadline });
		eventsMade.push(event.id);
		return {
			user,
			client,
			organisationId: organisation.id,
			eventId: event.id,
			deadline,
			name: organisation.name
		};
	}

	/**
	 * Holds a lock on the event's row that keeps bids from being recorded (they lock it for update), as a
	 * long transaction of the buying side would, until released; rows that merely refer to the event (an
	 * upload's) can still be written.
	 */
	async function holdEvent(eventId: string) {
		const trx = await testDb().transaction();
		await trx('events').where({ id: eventId }).forNoKeyUpdate().first('id');
		return () => trx.rollback();
	}

	it('refused at the deadline: answered 409, its file deleted, and no row or trail entry claims a bid', async () => {
		const own = await aSupplierBefore(8);
		const release = await holdEvent(own.eventId);
		const answer = uploadSheet(own.client, own.eventId, VALID_BID, 'bid.csv');
		// The file is stored, and the upload waits for the event to record it as a bid ...
		const prefix = `uploads/${own.eventId}/${own.organisationId}/`;
		await until('the file stored', async () => ((await storedKeys(prefix)).length ? true : undefined));
		// ... while the deadline passes.
		await untilPast(own.deadline);
		await release();
		const refused = await answer;
		expect(refused.status).toBe(409);
		expect((await json(refused)).message).toMatch(/^The bid deadline passed at /);
		expect(await storedKeys(prefix)).toEqual([]);
		const rows = await testDb()('uploads').where({ event_id: own.eventId }).select('status');
		expect(rows.map((r) => r.status)).toEqual(['refused']);
		expect(await testDb()('bid_revisions').where({ event_id: own.eventId })).toEqual([]);
		const actions = await testDb()('trail_entries').where({ event_id: own.eventId }).pluck('action');
		expect(actions.filter((a: string) => a.startsWith('upload'))).toEqual([]);
	}, 60_000);

	it('killed (kill -9) after storing its file: the file has its row, and the sweep removes both', async () => {
		const own = await aSupplierBefore(600);
		const folder = mkdtempSync(join(tmpdir(), 'tenderloom-upload-'));
		const file = join(folder, 'bid.csv');
		writeFileSync(file, VALID_BID);
		const release = await holdEvent(own.eventId);
		const actor = {
			id: own.user.id,
			name: own.user.name,
			email: own.user.email,
			role: 'supplier',
			organisationId: own.organisationId,
			organisationName: own.name
		};
		const child = spawn(
			process.execPath,
			['--import', 'tsx', 'tests/support/upload-in-process.ts', JSON.stringify(actor), own.eventId, file],
			{ stdio: ['ignore', 'pipe', 'pipe'] }
		);
		const exited = new Promise<string | null>((resolve) =>
			child.once('exit', (_code, signal) => resolve(signal))
		);
		let output = '';
		child.stdout.on('data', (chunk: Buffer) => (output += chunk.toString()));
		child.stderr.on('data', (chunk: Buffer) => (output += chunk.toString()));
		const prefix = `uploads/${own.eventId}/${own.organisationId}/`;
		try {
			const [key] = await until(`the file stored (${output})`, async () => {
				const keys = await storedKeys(prefix);
				return keys.length ? keys : undefined;
			});
			child.kill('SIGKILL');
			expect(await exited).toBe('SIGKILL');
			await release();
			// No object without a row: the row was committed before the file was put.
			const row = await testDb()('uploads').where({ storage_key: key }).first('id', 'status');
			expect(row?.status).toBe('receiving');
			expect(await testDb()('bid_revisions').where({ event_id: own.eventId })).toEqual([]);
			// A request that died minutes ago: the sweep refuses its upload and deletes its file.
			await testDb()('uploads')
				.where({ id: row.id })
				.update({ received_at: new Date(Date.now() - 10 * 60_000) });
			const sweep = await sweepUploadOrphans();
			expect(sweep.deleted).toContain(key);
			expect(await storedKeys(prefix)).toEqual([]);
			expect((await testDb()('uploads').where({ id: row.id }).first('status')).status).toBe('refused');
			// The supplier's page lists only uploads that were answered.
			const page = await (await own.client.get(`/supplier/events/${own.eventId}`)).text();
			expect(page).not.toContain('data-testid="uploads"');
		} finally {
			child.kill('SIGKILL');
			await release().catch(() => undefined);
			rmSync(folder, { recursive: true, force: true });
		}
	}, 60_000);

	it('aborted by its sender half-way through the body: nothing stored, no row, and the server answers on', async () => {
		const own = await aSupplierBefore(600);
		const boundary = '----tenderloom-abort';
		const head = Buffer.from(
			`--${boundary}\r\nContent-Disposition: form-data; name="file"; filename="bid.csv"\r\nContent-Type: text/csv\r\n\r\n`
		);
		const big = Buffer.concat([VALID_BID, Buffer.from('\r\n' + 'x'.repeat(400_000))]);
		const controller = new AbortController();
		const body = new ReadableStream<Uint8Array>({
			async start(stream) {
				stream.enqueue(new Uint8Array(head));
				stream.enqueue(new Uint8Array(big.subarray(0, 200_000)));
				await new Promise((r) => setTimeout(r, 500));
				controller.abort();
			}
		});
		await expect(
			own.client.request(`/api/events/${own.eventId}/bids`, {
				method: 'POST',
				body,
				headers: { 'content-type': `multipart/form-data; boundary=${boundary}` },
				accept: 'application/json',
				signal: controller.signal,
				duplex: 'half'
			} as RequestInit)
		).rejects.toThrow();
		await new Promise((r) => setTimeout(r, 1000));
		expect(await storedKeys(`uploads/${own.eventId}/`)).toEqual([]);
		expect(await testDb()('uploads').where({ event_id: own.eventId })).toEqual([]);
		expect((await fetch(`${appUrl()}/healthz`)).ok).toBe(true);
		expect((await uploadSheet(own.client, own.eventId, VALID_BID, 'bid.csv')).status).toBe(201);
	}, 60_000);
});

describe('the object store after this file', () => {
	it('holds no file of these events that no answered upload keeps (zero orphans)', async () => {
		const orphans: string[] = [];
		let stored = 0;
		for (const eventId of eventsMade) {
			const keys = await storedKeys(`uploads/${eventId}/`);
			stored += keys.length;
			const kept = new Set(
				await testDb()('uploads')
					.where({ event_id: eventId })
					.whereIn('status', ['accepted', 'rejected'])
					.pluck('storage_key')
			);
			orphans.push(...keys.filter((k) => !kept.has(k)));
		}
		expect(stored).toBeGreaterThan(0);
		expect(orphans).toEqual([]);
	});
});
