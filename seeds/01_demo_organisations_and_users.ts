import bcrypt from 'bcryptjs';
import type { Knex } from 'knex';
import { BUYING_ORGANISATION, DEMO_PASSWORD, demoAccounts } from './data/demo-accounts';

// Idempotent: organisations and users are matched by name and e-mail, and brought back to the demo state.
export async function seed(knex: Knex): Promise<void> {
	const passwordHash = await bcrypt.hash(DEMO_PASSWORD, 12);
	await knex.transaction(async (trx) => {
		const organisationIds = new Map<string, string>();
		const organisations = [...new Set(demoAccounts.map((a) => a.organisation))];
		for (const name of organisations) {
			const kind = name === BUYING_ORGANISATION ? 'buyer' : 'supplier';
			const found = await trx('organisations')
				.whereRaw('kind = ? and lower(name) = lower(?)', [kind, name])
				.first('id');
			const id =
				(found?.id as string | undefined) ??
				((await trx('organisations').insert({ name, kind }).returning('id'))[0] as { id: string }).id;
			organisationIds.set(name, id);
		}
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
