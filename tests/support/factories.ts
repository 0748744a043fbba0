// Small factories for the data each test needs; tests never rely on the demo seeds.
import { randomUUID } from 'node:crypto';
import knex, { type Knex } from 'knex';
import { hashPassword } from '../../src/lib/server/auth/passwords';
import type { Role } from '../../src/lib/roles';
import { databaseUrl } from './env';

let connection: Knex | undefined;

export function testDb(): Knex {
	connection ??= knex({ client: 'pg', connection: databaseUrl(), pool: { min: 0, max: 4 } });
	return connection;
}

export async function closeTestDb(): Promise<void> {
	await connection?.destroy();
	connection = undefined;
}

export const unique = (label: string) => `${label}-${randomUUID().slice(0, 8)}`;

export async function anOrganisation(
	kind: 'buyer' | 'supplier',
	name = unique(kind === 'buyer' ? 'Buying org' : 'Supplier')
) {
	const [row] = await testDb()('organisations').insert({ name, kind }).returning(['id', 'name', 'kind']);
	return row as { id: string; name: string; kind: 'buyer' | 'supplier' };
}

/** The buying organisation staff join; made once per database. */
export async function theBuyingOrganisation(): Promise<{ id: string; name: string; kind: 'buyer' }> {
	// Tests running side by side may all find none: a transaction-scoped advisory lock lets one make it.
	return testDb().transaction(async (trx) => {
		await trx.raw(`select pg_advisory_xact_lock(hashtext('tests: the buying organisation'))`);
		const found = await trx('organisations')
			.where({ kind: 'buyer' })
			.orderBy('created_at')
			.first(['id', 'name', 'kind']);
		if (found) return found as { id: string; name: string; kind: 'buyer' };
		const [row] = await trx('organisations')
			.insert({ name: 'Test buying organisation', kind: 'buyer' })
			.returning(['id', 'name', 'kind']);
		return row as { id: string; name: string; kind: 'buyer' };
	});
}

export interface TestUser {
	id: number;
	email: string;
	name: string;
	role: Role;
	organisationId: string;
	password: string | null;
}

export async function aUser(
	role: Role,
	options: { password?: string | null; organisationId?: string; deactivated?: boolean } = {}
): Promise<TestUser> {
	const organisationId =
		options.organisationId ??
		(role === 'supplier' ? (await anOrganisation('supplier')).id : (await theBuyingOrganisation()).id);
	const password =
		options.password === undefined
			? role === 'supplier'
				? null
				: 'correct horse battery'
			: options.password;
	const email = `${unique(role)}@example.test`;
	const name = `Test ${role}`;
	const [row] = await testDb()('users')
		.insert({
			email,
			name,
			role,
			organisation_id: organisationId,
			organisation_kind: role === 'supplier' ? 'supplier' : 'buyer',
			password_hash: password ? await hashPassword(password) : null,
			deactivated_at: options.deactivated ? new Date() : null
		})
		.returning('id');
	return { id: (row as { id: number }).id, email, name, role, organisationId, password };
}
