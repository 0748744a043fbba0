import bcrypt from 'bcryptjs';
import type { Knex } from 'knex';
import { findOrganisationByName, insertOrganisation } from '../src/lib/server/db/organisations';
import { BUYING_ORGANISATION, DEMO_PASSWORD, demoAccounts } from './data/demo-accounts';

// Idempotent: organisations and users are matched by name and e-mail, and brought back to the demo state.
export async function seed(knex: Knex): Promise<void> {
	const passwordHash = await bcrypt.hash(DEMO_PASSWORD, 12);
	await knex.transaction(async (trx) => {
		const organisationIds = new Map<string, string>();
		const organisations = [...new Set(demoAccounts.map((a) => a.organisation))];
		for (const name of organisations) {
			const kind = name === BUYING_ORGANISATION ? 'buyer' : 'supplier';
			const found =
				(await findOrganisationByName(trx, kind, name)) ?? (await insertOrganisation(trx, name, kind));
			organisationIds.set(name, found.id);
		}
		// Users are upserted by e-mail (name, role, organisation and password brought back to the demo's):
		// db/users.ts has no upsert, so this stays a query of its own.
		for (const account of demoAccounts) {
			const organisationKind = account.role === 'supplier' ? 'supplier' : 'buyer';
			await trx('users')
				.insert({
					email: account.email,
					name: account.name,
					role: account.role,
					organisation_id: organisationIds.get(account.organisation),
					organisation_kind: organisationKind,
					password_hash: account.password ? passwordHash : null,
					emailVerified: trx.fn.now()
				})
				.onConflict('email')
				.merge(['name', 'role', 'organisation_id', 'organisation_kind', 'password_hash']);
			await trx('users').where({ email: account.email }).update({ deactivated_at: null });
		}
	});
}
