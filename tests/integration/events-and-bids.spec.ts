import * as devalue from 'devalue';
import JSZip from 'jszip';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import type { Browserless } from '../support/http';
import { closeTestDb, testDb, type TestUser } from '../support/factories';
import {
	aSignedInUser,
	aSupplierOrganisationWithUser,
	anOpenEvent,
	fillSheet,
	signedIn,
	untilPast,
	uploadSheet,
	type TestEvent
} from '../support/events';
import { latestMailTo } from '../support/mail';

afterAll(closeTestDb);

const json = async (response: Response) => (await response.json()) as Record<string, unknown>;

interface Cast {
	buyer: { user: TestUser; client: Browserless };
	approver: { user: TestUser; client: Browserless };
	auditor: { user: TestUser; client: Browserless };
	admin: { user: TestUser; client: Browserless };
	a: { user: TestUser; client: Browserless; organisationId: string; name: string };
	b: { user: TestUser; client: Browserless; organisationId: string; name: string };
	outsider: { user: TestUser; client: Browserless; organisationId: string; name: string };
}

async function aSupplier() {
	const { organisation, user } = await aSupplierOrganisationWithUser();
	return { user, client: await signedIn(user), organisationId: organisation.id, name: organisation.name };
}

let cast: Cast;
let event: TestEvent;

beforeAll(async () => {
	const [buyer, approver, auditor, admin, a, b, outsider] = await Promise.all([
		aSignedInUser('buyer'),
		aSignedInUser('approver'),
		aSignedInUser('auditor'),
		aSignedInUser('admin'),
		aSupplier(),
		aSupplier(),
		aSupplier()
	]);
	cast = { buyer, approver, auditor, admin, a, b, outsider };
	event = await anOpenEvent({
		createdBy: buyer.user.id,
		invite: [a.organisationId, b.organisationId],
		allowPriceBreaks: true,
		allowCapacity: true,
		allowBundles: true
	});
	// Both invited suppliers bid before the matrix runs.
	for (const [who, price] of [
		[a, 4.25],
		[b, 5.5]
	] as const) {
		const sheet = Buffer.from(
			await (await who.client.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer()
		);
		const filled = await fillSheet(sheet, {
			'IT-1': [price],
			'IT-2': [price + 1],
			'IT-3': [price + 2]
		});
		expect((await uploadSheet(who.client, event.id, filled)).status).toBe(201);
	}
	await testDb()('questions').insert({
		event_id: event.id,
		supplier_organisation_id: b.organisationId,
		asked_by: b.user.id,
		text: `Question from ${b.name}: may we quote in pallets?`
	});
});

describe('the access matrix of event and bid routes (before the deadline)', () => {
	// Expected status per route and viewer. Suppliers outside the event get 404 (not even its existence
	// leaks); staff other than buyers read event data but never sealed prices.
	const routes = (id: string) => ({
		list: '/api/events',
		detail: `/api/events/${id}`,
		items: `/api/events/${id}/items`,
		sheet: `/api/events/${id}/bid-sheet`,
		bids: `/api/events/${id}/bids`,
		submissions: `/api/events/${id}/submissions`,
		questions: `/api/events/${id}/questions`
	});
	const expected: Record<string, Record<keyof ReturnType<typeof routes>, number>> = {
		buyer: { list: 200, detail: 200, items: 200, sheet: 403, bids: 403, submissions: 200, questions: 200 },
		approver: { list: 200, detail: 200, items: 200, sheet: 403, bids: 403, submissions: 200, questions: 200 },
		auditor: { list: 200, detail: 200, items: 200, sheet: 403, bids: 403, submissions: 200, questions: 200 },
		admin: { list: 200, detail: 200, items: 200, sheet: 403, bids: 403, submissions: 200, questions: 200 },
		a: { list: 200, detail: 200, items: 200, sheet: 200, bids: 200, submissions: 403, questions: 200 },
		outsider: { list: 200, detail: 404, items: 404, sheet: 404, bids: 404, submissions: 404, questions: 404 }
	};

	for (const viewer of Object.keys(expected)) {
		it(`answers ${viewer} as the matrix says on every route`, async () => {
			const client = cast[viewer as keyof Cast].client;
			const got: Record<string, number> = {};
			for (const [name, path] of Object.entries(routes(event.id)))
				got[name] = (await client.get(path, 'application/json')).status;
			expect(got).toEqual(expected[viewer]);
		});
	}

	it('refuses an anonymous caller on every route with 401', async () => {
		for (const path of Object.values(routes(event.id))) {
			const response = await fetch(`${process.env.APP_URL}${path}`, {
				headers: { accept: 'application/json' }
			});
			expect(response.status, path).toBe(401);
		}
	});

	it('lets only invited suppliers post a bid, and nobody else', async () => {
		const sheet = Buffer.from(
			await (await cast.a.client.get(`/api/events/${event.id}/bid-sheet`)).arrayBuffer()
		);
		for (const [viewer, status] of [
			['buyer', 403],
			['auditor', 403],
			['approver', 403],
			['outsider', 404]
		] as const) {
			expect((await uploadSheet(cast[viewer].client, event.id, sheet)).status, viewer).toBe(status);
		}
	});

	it('keeps pages to their side: buyers on the buyer pages, invited suppliers on the supplier page', async () => {
		expect((await cast.buyer.client.get(`/buyer/events/${event.id}/bids`)).status).toBe(200);
		expect((await cast.a.client.get(`/buyer/events/${event.id}`)).status).toBe(403);
		expect((await cast.a.client.get(`/supplier/events/${event.id}`)).status).toBe(200);
		expect((await cast.outsider.client.get(`/supplier/events/${event.id}`)).status).toBe(404);
		expect((await cast.buyer.client.get(`/supplier/events/${event.id}`)).status).toBe(403);
	});

	it('shows supplier A only its own bid, never B’s prices, name, questions or the number of bidders', async () => {
		const bids = await json(await cast.a.client.get(`/api/events/${event.id}/bids`, 'application/json'));
		expect(bids.bids).toHaveLength(1);
		const everything = JSON.stringify([
			bids,
			await json(await cast.a.client.get(`/api/events/${event.id}`, 'application/json')),
			await json(await cast.a.client.get(`/api/events/${event.id}/questions`, 'application/json')),
			await json(await cast.a.client.get('/api/events', 'application/json')),
			await (await cast.a.client.get(`/supplier/events/${event.id}`)).text()
		]);
		expect(everything).toContain('4.25');
		// As a number on its own: a time stamp such as 08:12:35.503Z holds the digits too.
		expect(everything).not.toMatch(/(?<![\d.])5\.50?(?![\d])/);
		expect(everything).not.toContain(cast.b.name);
		expect(everything).not.toContain(cast.b.organisationId);
		expect(everything).not.toContain('may we quote in pallets');
		const detail = await json(await cast.a.client.get(`/api/events/${event.id}`, 'application/json'));
		expect(detail.invitations).toEqual([]);
		expect(
			JSON.stringify(await json(await cast.a.client.get('/api/events', 'application/json')))
		).not.toContain('"invited"');
	});

	it('shows buyers who submitted and when, but no price, before the deadline', async () => {
		const submissions = await json(
			await cast.buyer.client.get(`/api/events/${event.id}/submissions`, 'application/json')
		);
		expect((submissions.submissions as { supplierName: string }[]).map((s) => s.supplierName).sort()).toEqual(
			[cast.a.name, cast.b.name].sort()
		);
		const page = await (await cast.buyer.client.get(`/buyer/events/${event.id}/bids`)).text();
		expect(page).toContain(cast.a.name);
		expect(page).not.toMatch(/(?<![\d.])4\.25(?!\d)/);
		expect(page).not.toMatch(/(?<![\d.])5\.50?(?!\d)/);
		const sealed = await cast.buyer.client.get(`/api/events/${event.id}/bids`, 'application/json');
		expect(sealed.status).toBe(403);
		expect((await json(sealed)).message).toMatch(/sealed until the deadline/);
	});

	it('publishes an answer to every invited supplier without the asker', async () => {
		const [question] = await testDb()('questions').where({ event_id: event.id });
		const page = await cast.buyer.client.get(`/buyer/events/${event.id}/questions`);
		const sentAfter = new Date();
		expect(await page.text()).toContain('may we quote in pallets');
		const response = await cast.buyer.client.postForm(`/buyer/events/${event.id}/questions?/answer`, {
			questionId: question.id,
			publishedQuestion: 'May we quote in pallets?',
			answer: 'No: quote per unit (C62).'
		});
		expect(response.status).toBeLessThan(400);
		const mail = await latestMailTo(cast.a.user.email, {
			after: sentAfter,
			timeoutMs: 15_000,
			subject: /Clarification/
		});
		expect(mail.subject).toMatch(/Clarification/);
		expect(mail.text).toContain('May we quote in pallets?');
		expect(mail.text).not.toContain(cast.b.name);
		const seen = JSON.stringify(
			await json(await cast.a.client.get(`/api/events/${event.id}/questions`, 'application/json'))
		);
		expect(seen).toContain('quote per unit');
		expect(seen).not.toContain(cast.b.name);
	});
});

describe('bad bid files', () => {
	let own: { user: TestUser; client: Browserless; organisationId: string };
	let badEvent: TestEvent;
	let sheet: Buffer;

	beforeAll(async () => {
		own = await aSupplier();
		badEvent = await anOpenEvent({
			createdBy: cast.buyer.user.id,
			invite: [own.organisationId],
			allowPriceBreaks: true
		});
		sheet = Buffer.from(await (await own.client.get(`/api/events/${badEvent.id}/bid-sheet`)).arrayBuffer());
		const good = await fillSheet(sheet, { 'IT-1': [3.1], 'IT-2': [4.2], 'IT-3': [5.3] });
		const sentAfter = new Date();
		const accepted = await uploadSheet(own.client, badEvent.id, good);
		expect(accepted.status).toBe(201);
		const receipt = await latestMailTo(own.user.email, { after: sentAfter, timeoutMs: 15_000 });
		const body = await json(accepted);
		expect(receipt.text).toContain((body.upload as { sha256: string }).sha256);
	});

	const problemsOf = async (response: Response) => {
		expect(response.status).toBe(422);
		return (await json(response)).problems as {
			message: string;
			sheet: string;
			row: number | null;
			column: string | null;
		}[];
	};

	async function expectFirstRevisionIntact() {
		const bids = await json(await own.client.get(`/api/events/${badEvent.id}/bids`, 'application/json'));
		const [bid] = bids.bids as { revision: number; lines: { item: string; unitPrice: number }[] }[];
		expect(bid!.revision).toBe(1);
		expect(bid!.lines.map((l) => l.unitPrice)).toEqual([3.1, 4.2, 5.3]);
	}

	it('refuses an oversized file', async () => {
		const problems = await problemsOf(
			await uploadSheet(own.client, badEvent.id, Buffer.alloc(5 * 1024 * 1024 + 10, 65), 'big.csv')
		);
		expect(problems[0]!.message).toMatch(/the limit is 5.0 MB/);
		await expectFirstRevisionIntact();
	});

	it('refuses a zip bomb disguised as .xlsx', async () => {
		const zip = new JSZip();
		zip.file('[Content_Types].xml', '<Types/>');
		zip.file('xl/workbook.xml', '<workbook/>');
		zip.file('xl/worksheets/sheet1.xml', Buffer.alloc(60 * 1024 * 1024, 32));
		const bomb = await zip.generateAsync({
			type: 'nodebuffer',
			compression: 'DEFLATE',
			compressionOptions: { level: 9 }
		});
		const problems = await problemsOf(await uploadSheet(own.client, badEvent.id, bomb, 'bid.xlsx'));
		expect(problems[0]!.message).toMatch(/expands to more than 50.0 MB/);
		await expectFirstRevisionIntact();
	});

	it('refuses a macro-enabled workbook renamed .xlsx', async () => {
		const zip = await JSZip.loadAsync(sheet);
		zip.file('xl/vbaProject.bin', Buffer.from([0xd0, 0xcf, 0x11, 0xe0]));
		const macro = await zip.generateAsync({ type: 'nodebuffer' });
		const problems = await problemsOf(await uploadSheet(own.client, badEvent.id, macro, 'bid.xlsx'));
		expect(problems[0]!.message).toMatch(/contains macros/);
		await expectFirstRevisionIntact();
	});

	it('treats CSV cells starting with = + - @ as text: refused as prices, never evaluated', async () => {
		const csv = await (await own.client.get(`/api/events/${badEvent.id}/bid-sheet?format=csv`)).text();
		const lines = csv.trim().split('\r\n');
		const planted = ['=1+1', '@SUM(A1)', '-3'];
		const rows = [lines[0], ...lines.slice(1).map((l, k) => `${l},${planted[k] ?? ''}`)];
		const problems = await problemsOf(
			await uploadSheet(own.client, badEvent.id, Buffer.from(rows.join('\r\n')), 'bid.csv')
		);
		expect(problems.map((p) => `${p.row}${p.column}`)).toEqual(['2F', '3F', '4F']);
		expect(problems[0]!.message).toBe('"=1+1" is not a number');
		expect(problems[1]!.message).toBe('"@SUM(A1)" is not a number');
		expect(problems[2]!.message).toBe('must not be negative');
		await expectFirstRevisionIntact();
	});

	it('refuses a sheet whose layout was changed, naming sheet, row and column', async () => {
		const moved = await fillSheet(sheet, {}, (workbook) => {
			workbook.getWorksheet('Prices')!.getCell('F1').value = 'Price';
		});
		const problems = await problemsOf(await uploadSheet(own.client, badEvent.id, moved));
		expect(problems[0]).toMatchObject({ sheet: 'Prices', row: 1, column: 'F' });
		await expectFirstRevisionIntact();
	});

	it('reports text in price cells, every one at once, and keeps the upload with its report', async () => {
		const bad = await fillSheet(sheet, { 'IT-1': ['cheap'], 'IT-2': ['4,2'], 'IT-3': [5] });
		const problems = await problemsOf(await uploadSheet(own.client, badEvent.id, bad));
		expect(problems.map((p) => [p.sheet, p.row, p.column])).toEqual([
			['Prices', 2, 'F'],
			['Prices', 3, 'F']
		]);
		const stored = await testDb()('uploads')
			.where({ event_id: badEvent.id, supplier_organisation_id: own.organisationId, status: 'rejected' })
			.orderBy('received_at', 'desc')
			.first();
		expect(stored.report).toHaveLength(2);
		expect(stored.storage_key).not.toContain('bid.xlsx');
		expect(stored.sha256).toMatch(/^[0-9a-f]{64}$/);
		await expectFirstRevisionIntact();
	});
});

describe('round trip through an upload', () => {
	it('parses back exactly the numbers written, price breaks, capacity and bundles included', async () => {
		const own = await aSupplier();
		const tripEvent = await anOpenEvent({
			createdBy: cast.buyer.user.id,
			invite: [own.organisationId],
			allowPriceBreaks: true,
			allowCapacity: true,
			allowBundles: true
		});
		const sheet = Buffer.from(
			await (await own.client.get(`/api/events/${tripEvent.id}/bid-sheet`)).arrayBuffer()
		);
		// Columns from F: unit price, max quantity, then three (from quantity, unit price) breaks.
		const filled = await fillSheet(
			sheet,
			{ 'IT-1': [4.123456, 90, 50, 4.1, 80, 3.95], 'IT-2': [7, null, 120, 6.5], 'IT-3': [0.015] },
			(workbook) => {
				workbook.getWorksheet('Capacity')!.getCell('B1').value = 450;
				const bundles = workbook.getWorksheet('Bundles')!;
				bundles.addRow(['B-1', 'IT-1', 100, 1234.56]);
				bundles.addRow(['B-1', 'IT-3', 300, null]);
			}
		);
		expect((await uploadSheet(own.client, tripEvent.id, filled)).status).toBe(201);
		const { bids } = (await json(
			await own.client.get(`/api/events/${tripEvent.id}/bids`, 'application/json')
		)) as {
			bids: Record<string, unknown>[];
		};
		expect(bids[0]).toMatchObject({
			revision: 1,
			capacity: 450,
			lines: [
				{
					item: 'IT-1',
					unitPrice: 4.123456,
					maxQuantity: 90,
					priceBreaks: [
						{ fromQuantity: 50, unitPrice: 4.1 },
						{ fromQuantity: 80, unitPrice: 3.95 }
					]
				},
				{
					item: 'IT-2',
					unitPrice: 7,
					maxQuantity: null,
					priceBreaks: [{ fromQuantity: 120, unitPrice: 6.5 }]
				},
				{ item: 'IT-3', unitPrice: 0.015, maxQuantity: null, priceBreaks: [] }
			],
			bundles: [
				{
					ref: 'B-1',
					price: 1234.56,
					items: [
						{ item: 'IT-1', quantity: 100 },
						{ item: 'IT-3', quantity: 300 }
					]
				}
			]
		});
	});
});

describe('at the deadline', () => {
	it('refuses every change after the deadline, opens the bids to buyers and records the opening', async () => {
		const own = await aSupplier();
		const deadline = new Date(Date.now() + 10_000);
		const late = await anOpenEvent({ createdBy: cast.buyer.user.id, invite: [own.organisationId], deadline });
		const sheet = Buffer.from(await (await own.client.get(`/api/events/${late.id}/bid-sheet`)).arrayBuffer());
		const filled = await fillSheet(sheet, { 'IT-1': [2.5] });
		expect((await uploadSheet(own.client, late.id, filled)).status).toBe(201);
		expect((await cast.buyer.client.get(`/api/events/${late.id}/bids`, 'application/json')).status).toBe(403);
		// The deadline passes (it can only move later, so the test waits): the event counts as closed
		// at once, whether or not the closing job has run yet.
		await untilPast(deadline);
		const refused = await uploadSheet(own.client, late.id, filled);
		expect(refused.status).toBe(409);
		expect((await json(refused)).message).toMatch(/bid deadline passed/);
		const withdraw = await own.client.postForm(
			`/supplier/events/${late.id}?/withdraw`,
			{},
			'application/json'
		);
		expect(JSON.stringify(await withdraw.json())).toMatch(/bid deadline passed/);
		const opened = await cast.buyer.client.get(`/api/events/${late.id}/bids`, 'application/json');
		expect(opened.status).toBe(200);
		const [bid] = (await json(opened)).bids as { supplierName: string; lines: { unitPrice: number }[] }[];
		expect(bid!.lines[0]!.unitPrice).toBe(2.5);
		const row = await testDb()('events').where({ id: late.id }).first();
		expect(row.state).toBe('closed');
		expect(row.opening_record).toMatchObject({ suppliers: 1, revisions: 1 });
	});
});

describe('setting up an event', () => {
	it('imports items with every bad row named, stores formula-like text as text and neutralises it on export', async () => {
		const own = await aSupplier();
		const draft = await anOpenEvent({
			createdBy: cast.buyer.user.id,
			invite: [own.organisationId],
			state: 'draft'
		});
		const importCsv = (text: string) => {
			const form = new FormData();
			form.append('file', new Blob([text]), 'items.csv');
			return cast.buyer.client.request(`/buyer/events/${draft.id}/items?/import`, {
				method: 'POST',
				body: form,
				accept: 'application/json'
			});
		};
		const bad = await importCsv(
			'Ref,Description,Lot,Quantity,Unit\r\nA-1,Bolts,L1,100,C62\r\nA-1,Nuts,L1,ten,kilo\r\n,Washers,L2,-5,C62\r\n'
		);
		// A form action answers a fetch asking for JSON with its data in devalue's format.
		const { data } = (await bad.json()) as { data: string };
		const { problems } = devalue.parse(data) as {
			problems: { row: number; column: string; message: string }[];
		};
		expect(problems.map((p) => `${p.row}${p.column}: ${p.message}`)).toEqual([
			'3A: "A-1" is already used in row 2',
			'3E: "KILO" is not a UN/CEFACT Recommendation 20 code (such as C62, KGM, MTR)',
			'3D: "ten" is not a number',
			'4A: the item ref is missing',
			'4D: must be more than 0'
		]);
		// Nothing was replaced by the refused import.
		expect(await testDb()('items').where({ event_id: draft.id }).count('* as n').first()).toMatchObject({
			n: '3'
		});

		const good = await importCsv(
			'Ref,Description,Lot,Quantity,Unit,Baseline unit price\r\nA-1,"=HYPERLINK(""http://x.test"")",L1,100,C62,2.5\r\nA-2,@cmd,L2,40,KGM,\r\n'
		);
		expect(good.status).toBe(200);
		const stored = await testDb()('items').where({ event_id: draft.id }).orderBy('position');
		expect(stored.map((i: { description: string }) => i.description)).toEqual([
			'=HYPERLINK("http://x.test")',
			'@cmd'
		]);
		await testDb()('events').where({ id: draft.id }).update({ state: 'open' });
		const csv = await (await own.client.get(`/api/events/${draft.id}/bid-sheet?format=csv`)).text();
		expect(csv).toContain(`"'=HYPERLINK(""http://x.test"")"`);
		expect(csv).toContain(`'@cmd`);
	});

	// 2031-03-30 is the last Sunday of March: Berlin's clocks go from 02:00 to 03:00 (IANA tz rules).
	it('refuses a deadline the event’s time zone skips, on the deadline field, and stores nothing', async () => {
		const reference = `DST-${Date.now()}`;
		const response = await cast.buyer.client.postForm(
			'/buyer/events/new',
			{
				reference,
				title: 'Clock change',
				description: '',
				currency: 'EUR',
				incoterm: 'DAP',
				deliveryPlace: '',
				deadlineLocal: '2031-03-30T02:30',
				timeZone: 'Europe/Berlin',
				bidValidityDays: '90'
			},
			'application/json'
		);
		const answer = (await response.json()) as { type: string; status: number; data: string };
		expect(answer).toMatchObject({ type: 'failure', status: 422 });
		const { form } = devalue.parse(answer.data) as { form: { errors: Record<string, string[]> } };
		expect(form.errors.deadlineLocal).toEqual([
			'2031-03-30 02:30 does not exist in Europe/Berlin: the clocks go forward then. Choose a time outside the change, such as an hour later.'
		]);
		expect(await testDb()('events').where({ reference }).first()).toBeUndefined();
	});

	it('mails every invited supplier an amendment after publishing and records it', async () => {
		const [one, two] = [await aSupplier(), await aSupplier()];
		const open = await anOpenEvent({
			createdBy: cast.buyer.user.id,
			invite: [one.organisationId, two.organisationId]
		});
		const sentAfter = new Date();
		const local = new Date(Date.now() + 10 * 24 * 3600_000).toISOString().slice(0, 16);
		const response = await cast.buyer.client.postForm(`/buyer/events/${open.id}?/amend`, {
			summary: 'The delivery place moves to the new depot.',
			description: '',
			deliveryPlace: 'New depot, Test town',
			deadlineLocal: local
		});
		expect(response.status).toBeLessThan(400);
		const head = await testDb()('trail_entries').where({ event_id: open.id }).orderBy('seq', 'desc').first();
		expect(head.action).toBe('amendment 1');
		for (const who of [one, two]) {
			const mail = await latestMailTo(who.user.email, { after: sentAfter, timeoutMs: 15_000 });
			expect(mail.subject).toMatch(/Amendment 1/);
			expect(mail.text).toContain('New depot, Test town');
			// The notice carries the trail's head, so the chain is anchored outside the database.
			expect(mail.text).toContain(`newest entry SHA-256 ${String(head.hash).trim()}`);
		}
		const [amendment] = await testDb()('amendments').where({ event_id: open.id });
		expect(amendment.detail.deliveryPlace).toEqual({ before: 'Test town', after: 'New depot, Test town' });
	});
});

describe('bidding on screen and withdrawing', () => {
	it('takes prices from the on-screen table with the same checks, and withdraws the bid before the deadline', async () => {
		const own = await aSupplier();
		const screen = await anOpenEvent({ createdBy: cast.buyer.user.id, invite: [own.organisationId] });
		const post = (entries: { item: string; cells: (string | null)[] }[]) =>
			own.client.request(`/supplier/events/${screen.id}?/prices`, {
				method: 'POST',
				body: new URLSearchParams({ entries: JSON.stringify(entries) }),
				accept: 'application/json'
			});
		const refused = (await (
			await post([
				{ item: 'IT-1', cells: ['1,5'] },
				{ item: 'IT-2', cells: ['-2'] }
			])
		).json()) as {
			data: string;
		};
		const { problems } = devalue.parse(refused.data) as {
			problems: { sheet: string; row: number; column: string }[];
		};
		expect(problems.map((p) => [p.sheet, p.row, p.column])).toEqual([
			['On-screen prices', 2, 'F'],
			['On-screen prices', 3, 'F']
		]);
		expect(
			await testDb()('bid_revisions').where({ event_id: screen.id }).count('* as n').first()
		).toMatchObject({
			n: '0'
		});

		await post([
			{ item: 'IT-1', cells: ['1.5'] },
			{ item: 'IT-3', cells: ['2.75'] }
		]);
		const bids = await json(await own.client.get(`/api/events/${screen.id}/bids`, 'application/json'));
		expect(bids.bids).toMatchObject([
			{
				revision: 1,
				withdrawn: false,
				lines: [
					{ item: 'IT-1', unitPrice: 1.5 },
					{ item: 'IT-3', unitPrice: 2.75 }
				]
			}
		]);

		await own.client.postForm(`/supplier/events/${screen.id}?/withdraw`, {}, 'application/json');
		const after = await json(await own.client.get(`/api/events/${screen.id}/bids`, 'application/json'));
		expect(after.bids).toMatchObject([{ revision: 2, withdrawn: true, lines: [] }]);
		// Issue 13: the on-screen grid was empty after a withdrawal; it keeps the last prices to bid again.
		const page = await (await own.client.get(`/supplier/events/${screen.id}`)).text();
		expect(page).toContain('value="1.5"');
		expect(page).toContain('value="2.75"');
		const submissions = await json(
			await cast.buyer.client.get(`/api/events/${screen.id}/submissions`, 'application/json')
		);
		expect(submissions.submissions).toMatchObject([{ latestRevision: 2, revisions: 2, withdrawn: true }]);
	});
});

describe('the closing job', () => {
	it('closes a published event at its deadline by a pg-boss job and records the opening', async () => {
		const own = await aSupplier();
		const soon = await anOpenEvent({
			createdBy: cast.buyer.user.id,
			invite: [own.organisationId],
			state: 'draft',
			deadline: new Date(Date.now() + 3000)
		});
		const published = await cast.buyer.client.postForm(
			`/buyer/events/${soon.id}?/publish`,
			{},
			'application/json'
		);
		expect(JSON.stringify(await published.json())).toContain('Published');
		// Nobody reads the event: only the job can close it.
		let row: { state: string; opening_record: { by: string } | null } | undefined;
		for (let k = 0; k < 60 && row?.state !== 'closed'; k++) {
			await new Promise((r) => setTimeout(r, 500));
			row = await testDb()('events').where({ id: soon.id }).first();
		}
		expect(row).toMatchObject({
			state: 'closed',
			opening_record: { by: 'deadline job', suppliers: 0, revisions: 0 }
		});
	});
});
