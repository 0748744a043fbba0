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

/** The single buying organisation that staff belong to. */
export async function buyingOrganisation(db: Db): Promise<OrganisationRow> {
	const found = await db<OrganisationRow>('organisations')
		.where({ kind: 'buyer' })
		.orderBy('created_at')
		.first();
	if (!found) throw new Error('no buying organisation exists yet: run the seeds or create one');
	return found;
}

export async function insertOrganisation(
	db: Db,
	name: string,
	kind: OrganisationKind
): Promise<OrganisationRow> {
	const [row] = await db<OrganisationRow>('organisations').insert({ name, kind }).returning('*');
	return row!;
}
