import type { Role } from '$lib/roles';
import type { Db } from './knex';
import { relatedSupplierIds } from './organisations';
import type { OrganisationKind, UserRow } from './tables';

export interface UserWithOrganisation extends UserRow {
	organisation_name: string;
}

const withOrganisation = (db: Db) =>
	db<UserRow>('users')
		.join('organisations', 'organisations.id', 'users.organisation_id')
		.select<UserWithOrganisation[]>('users.*', 'organisations.name as organisation_name');

export function findUserById(db: Db, id: number): Promise<UserWithOrganisation | undefined> {
	return withOrganisation(db).where('users.id', id).first();
}

export function findUserByEmail(db: Db, email: string): Promise<UserWithOrganisation | undefined> {
	return withOrganisation(db).where('users.email', email.toLowerCase()).first();
}

/** The users a buying organisation's admin manages: its own staff and the users of its suppliers. */
const managedBy = (db: Db, buyingOrganisationId: string) =>
	withOrganisation(db).where((scope) => {
		void scope
			.where('users.organisation_id', buyingOrganisationId)
			.orWhereIn('users.organisation_id', relatedSupplierIds(db, buyingOrganisationId));
	});

export function listUsers(db: Db, buyingOrganisationId: string): Promise<UserWithOrganisation[]> {
	return managedBy(db, buyingOrganisationId).orderBy([{ column: 'users.role' }, { column: 'users.email' }]);
}

export function findManagedUser(
	db: Db,
	buyingOrganisationId: string,
	id: number
): Promise<UserWithOrganisation | undefined> {
	return managedBy(db, buyingOrganisationId).where('users.id', id).first();
}

export interface NewUser {
	email: string;
	name: string;
	role: Role;
	organisationId: string;
	organisationKind: OrganisationKind;
	invitedBy: number | null;
	passwordHash?: string | null;
}

export async function insertUser(db: Db, user: NewUser): Promise<UserRow> {
	const [row] = await db<UserRow>('users')
		.insert({
			email: user.email.toLowerCase(),
			name: user.name,
			role: user.role,
			organisation_id: user.organisationId,
			organisation_kind: user.organisationKind,
			invited_by: user.invitedBy,
			password_hash: user.passwordHash ?? null
		})
		.returning('*');
	return row!;
}

export async function updateUserRole(db: Db, id: number, role: Role): Promise<void> {
	await db('users').where({ id }).update({ role });
}

export async function setUserDeactivated(db: Db, id: number, deactivated: boolean): Promise<void> {
	await db('users')
		.where({ id })
		.update({ deactivated_at: deactivated ? db.fn.now() : null });
}

export async function setPasswordHash(db: Db, id: number, passwordHash: string): Promise<void> {
	await db('users').where({ id }).update({ password_hash: passwordHash });
}
