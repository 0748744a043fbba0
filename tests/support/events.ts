// Events for tests, made directly in the database, and signed-in clients for each role.
import ExcelJS from 'exceljs';
import type { Role } from '../../src/lib/roles';
import { canonicalJson, sha256 } from '../../src/lib/server/trail';
import { Browserless } from './http';
import { aUser, anOrganisation, testDb, theBuyingOrganisation, unique, type TestUser } from './factories';

export async function signedIn(user: TestUser): Promise<Browserless> {
	const client = new Browserless();
	if (user.role === 'supplier') await client.signInByEmailLink(user.email);
	else await client.signInWithPassword(user.email, user.password!);
	return client;
}

export async function aSignedInUser(role: Role, options: { organisationId?: string } = {}) {
	const user = await aUser(role, options);
	return { user, client: await signedIn(user) };
}

export interface TestEvent {
	id: string;
	reference: string;
	items: { id: string; ref: string; quantity: number }[];
}

/** An open event (published) of the buying organisation with items in lots, and the given suppliers invited. */
export async function anOpenEvent(options: {
	createdBy: number;
	invite: string[];
	items?: number;
	deadline?: Date;
	allowPriceBreaks?: boolean;
	allowCapacity?: boolean;
	allowBundles?: boolean;
	allowPackSizes?: boolean;
	state?: 'draft' | 'open';
	/** Another buying organisation's event (default: the one buying organisation of the tests). */
	organisationId?: string;
}): Promise<TestEvent> {
	const db = testDb();
	const buying = options.organisationId ? { id: options.organisationId } : await theBuyingOrganisation();
	const reference = unique('EV');
	const [event] = await db('events')
		.insert({
			organisation_id: buying.id,
			reference,
			title: 'Test event',
			currency: 'EUR',
			incoterm: 'DAP',
			delivery_place: 'Test town',
			deadline: options.deadline ?? new Date(Date.now() + 7 * 24 * 3600_000),
			time_zone: 'Europe/Berlin',
			state: options.state ?? 'open',
			published_at: options.state === 'draft' ? null : new Date(),
			allow_price_breaks: options.allowPriceBreaks ?? false,
			allow_capacity: options.allowCapacity ?? false,
			allow_bundles: options.allowBundles ?? false,
			allow_pack_sizes: options.allowPackSizes ?? false,
			created_by: options.createdBy
		})
		.returning('id');
	const [lot] = await db('lots').insert({ event_id: event.id, ref: 'L1', title: 'Lot 1' }).returning('id');
	const count = options.items ?? 3;
	const items = await db('items')
		.insert(
			Array.from({ length: count }, (_, k) => ({
				event_id: event.id,
				lot_id: lot.id,
				ref: `IT-${k + 1}`,
				description: `Test item ${k + 1}`,
				quantity: 100 * (k + 1),
				unit: 'C62',
				position: k
			}))
		)
		.returning(['id', 'ref', 'quantity']);
	for (const organisationId of options.invite)
		await db('invitations').insert({
			event_id: event.id,
			supplier_organisation_id: organisationId,
			invited_by: options.createdBy
		});
	return {
		id: event.id,
		reference,
		items: items.map((i: { id: string; ref: string; quantity: string }) => ({
			...i,
			quantity: Number(i.quantity)
		}))
	};
}

export async function aSupplierOrganisationWithUser() {
	const organisation = await anOrganisation('supplier');
	const user = await aUser('supplier', { organisationId: organisation.id });
	return { organisation, user };
}

/** Fills the Prices sheet of a downloaded bid sheet: one row per item ref with the given cells from column F. */
export async function fillSheet(
	sheet: Buffer,
	prices: Record<string, (string | number | null)[]>,
	edit?: (workbook: ExcelJS.Workbook) => void
): Promise<Buffer> {
	const workbook = new ExcelJS.Workbook();
	await workbook.xlsx.load(sheet as unknown as ArrayBuffer);
	const ws = workbook.getWorksheet('Prices')!;
	ws.eachRow((row, number) => {
		if (number === 1) return;
		const cells = prices[String(row.getCell(1).value)];
		cells?.forEach((value, k) => (row.getCell(6 + k).value = value));
	});
	edit?.(workbook);
	return Buffer.from(await workbook.xlsx.writeBuffer());
}

export async function uploadSheet(
	client: Browserless,
	eventId: string,
	bytes: Buffer,
	fileName = 'bid.xlsx'
) {
	const form = new FormData();
	form.append('file', new Blob([new Uint8Array(bytes)]), fileName);
	return client.request(`/api/events/${eventId}/bids`, {
		method: 'POST',
		body: form,
		accept: 'application/json'
	});
}

/**
 * Waits until a moment (a deadline) has passed. Once published, a deadline can only move later, even
 * in SQL, so tests that need bids opened give the event a deadline a few seconds ahead and let it pass.
 */
export async function untilPast(moment: Date, marginMs = 300): Promise<void> {
	const wait = moment.getTime() - Date.now() + marginMs;
	if (wait > 0) await new Promise((r) => setTimeout(r, wait));
}

/**
 * A run stored as startRun stores it, with its plan (the lowest-cost plan when the problem has no rules),
 * for tests that drive the workers directly. `fields` sets or overrides columns of the run (status,
 * result, attempts, started_at…). Returns the run's id.
 */
export async function aStoredRun(options: {
	eventId: string;
	createdBy: number;
	problem: { rules?: unknown[] };
	fields?: Record<string, unknown>;
}): Promise<{ id: string }> {
	const rules = options.problem.rules ?? [];
	const name = rules.length ? 'Rules' : 'Lowest cost (no rules)';
	const [plan] = await testDb()('award_plans')
		.insert({ event_id: options.eventId, name, rules: JSON.stringify(rules), lowest_cost: !rules.length })
		.returning('id');
	const [run] = await testDb()('award_runs')
		.insert({
			event_id: options.eventId,
			plan_id: plan.id,
			number: 1,
			plan_name: name,
			status: 'queued',
			problem: JSON.stringify(options.problem),
			problem_sha256: sha256(canonicalJson(options.problem)),
			created_by: options.createdBy,
			...options.fields
		})
		.returning('id');
	return { id: run.id as string };
}

/** A small stored problem, as a run snapshots it (docs/award-engine.md): two bids on one item; optimum 25. */
export const TWO_BID_PROBLEM = {
	currency: 'EUR',
	items: [{ ref: 'IT-1', quantity: 10 }],
	suppliers: [{ ref: 'S1' }, { ref: 'S2' }],
	bids: [
		{ supplier: 'S1', item: 'IT-1', unitPrice: 3 },
		{ supplier: 'S2', item: 'IT-1', unitPrice: 2.5 }
	],
	bundles: [],
	rules: []
};
