import type { Db } from './knex';
import type { OrganisationKind, OrganisationRow } from './tables';

export function findOrganisation(db: Db, id: string): Promise<OrganisationRow | undefined> {
	return db<OrganisationRow>('organisations').where({ id }).first();
}

export function findOrganisationByName(
	db: Db,
	kind: OrganisationKind,
	name: string
): Promise<OrganisationRow | undefined> {
	return db<OrganisationRow>('organisations')
		.where({ kind })
		.whereRaw('lower(name) = lower(?)', [name])
		.first();
}

export function listOrganisations(db: Db, kind?: OrganisationKind): Promise<OrganisationRow[]> {
	const query = db<OrganisationRow>('organisations').orderBy('name');
	return kind ? query.where({ kind }) : query;
}

/**
 * Supplier organisations that work with a buying organisation: invited to one of its events, or with a
 * user whom its staff invited. Its admin manages only these and its own staff.
 */
export function relatedSupplierIds(db: Db, buyingOrganisationId: string) {
	return db
		.select('invitations.supplier_organisation_id as id')
		.from('invitations')
		.join('events', 'events.id', 'invitations.event_id')
		.where('events.organisation_id', buyingOrganisationId)
		.union(
			db
				.select('invited.organisation_id as id')
				.from('users as invited')
				.join('users as inviter', 'inviter.id', 'invited.invited_by')
				.where('invited.organisation_kind', 'supplier')
				.where('inviter.organisation_id', buyingOrganisationId)
		);
}

export function listRelatedSuppliers(db: Db, buyingOrganisationId: string): Promise<OrganisationRow[]> {
	return db<OrganisationRow>('organisations')
		.where({ kind: 'supplier' })
		.whereIn('id', relatedSupplierIds(db, buyingOrganisationId))
		.orderBy('name');
}

/** The buying organisations a supplier organisation works with (see relatedSupplierIds). */
export async function buyersOfSupplier(db: Db, supplierOrganisationId: string): Promise<string[]> {
	const rows: { id: string }[] = await db
		.select('events.organisation_id as id')
		.from('invitations')
		.join('events', 'events.id', 'invitations.event_id')
		.where('invitations.supplier_organisation_id', supplierOrganisationId)
		.union(
			db
				.select('inviter.organisation_id as id')
				.from('users as invited')
				.join('users as inviter', 'inviter.id', 'invited.invited_by')
				.where('invited.organisation_id', supplierOrganisationId)
				.where('inviter.organisation_kind', 'buyer')
		);
	return rows.map((r) => r.id);
}

export async function insertOrganisation(
	db: Db,
	name: string,
	kind: OrganisationKind
): Promise<OrganisationRow> {
	const [row] = await db<OrganisationRow>('organisations').insert({ name, kind }).returning('*');
	return row!;
}

/** The organisation's standstill when it set none: the one place the default lives. */
export const DEFAULT_STANDSTILL_DAYS = 10;

/** The organisation's standstill, in calendar days after an award notice is dispatched. */
export async function standstillDays(db: Db, id: string): Promise<number> {
	const row = await db('organisations').where({ id }).first('standstill_days');
	return (row?.standstill_days as number | null | undefined) ?? DEFAULT_STANDSTILL_DAYS;
}

export async function setStandstillDays(db: Db, id: string, days: number): Promise<void> {
	await db('organisations').where({ id }).update({ standstill_days: days });
}

/** Whether the database answers at all (the health check). */
export async function databaseAnswers(db: Db): Promise<boolean> {
	try {
		await db.raw('select 1');
		return true;
	} catch {
		return false;
	}
}
