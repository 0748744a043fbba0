import { afterAll, describe, expect, it } from 'vitest';
import {
	aUser,
	anOrganisation,
	closeTestDb,
	testDb,
	theBuyingOrganisation,
	unique
} from '../support/factories';

afterAll(closeTestDb);

/** A user row written straight to the table, past every service rule: for testing the constraints. */
const aRawUser = (fields: Record<string, unknown>) =>
	testDb()('users').insert({ email: `${unique('x')}@example.test`, ...fields });

describe('users, roles and organisations in PostgreSQL', () => {
	it('keeps a supplier user in its supplier organisation and staff in the buying organisation', async () => {
		const supplier = await anOrganisation('supplier');
		const bidder = await aUser('supplier', { organisationId: supplier.id });
		const buyer = await aUser('buyer');
		const rows = await testDb()('users')
			.join('organisations', 'organisations.id', 'users.organisation_id')
			.whereIn('users.id', [bidder.id, buyer.id])
			.select('users.email', 'users.role', 'organisations.kind', 'organisations.name');
		expect(rows).toEqual(
			expect.arrayContaining([
				{ email: bidder.email, role: 'supplier', kind: 'supplier', name: supplier.name },
				{ email: buyer.email, role: 'buyer', kind: 'buyer', name: (await theBuyingOrganisation()).name }
			])
		);
	});

	it('refuses a staff role in a supplier organisation', async () => {
		const supplier = await anOrganisation('supplier');
		await expect(
			aRawUser({
				role: 'buyer',
				organisation_id: supplier.id,
				organisation_kind: 'supplier'
			})
		).rejects.toThrow(/users_role_matches_organisation/);
	});

	it('refuses a supplier user whose organisation kind is misstated', async () => {
		const supplier = await anOrganisation('supplier');
		await expect(
			aRawUser({
				role: 'supplier',
				organisation_id: supplier.id,
				organisation_kind: 'buyer'
			})
		).rejects.toThrow(/foreign key|users_role_matches_organisation/);
	});

	it('refuses a role that does not exist', async () => {
		const buying = await theBuyingOrganisation();
		await expect(
			aRawUser({
				role: 'superuser',
				organisation_id: buying.id,
				organisation_kind: 'buyer'
			})
		).rejects.toThrow(/users_role_check/);
	});

	it('refuses a password on a supplier account', async () => {
		const supplier = await anOrganisation('supplier');
		await expect(
			aRawUser({
				role: 'supplier',
				organisation_id: supplier.id,
				organisation_kind: 'supplier',
				password_hash: '$2b$12$abcdefghijklmnopqrstuv'
			})
		).rejects.toThrow(/users_password_staff_only/);
	});

	it('stores e-mail addresses in lower case only', async () => {
		const buying = await theBuyingOrganisation();
		await expect(
			testDb()('users').insert({
				email: 'Mixed@Example.test',
				role: 'buyer',
				organisation_id: buying.id,
				organisation_kind: 'buyer'
			})
		).rejects.toThrow(/users_email_lower/);
	});

	it('keeps the account log append-only', async () => {
		const user = await aUser('buyer');
		await testDb()('account_events').insert({ subject_user_id: user.id, action: 'user.invited' });
		await expect(
			testDb()('account_events').where({ subject_user_id: user.id }).update({ action: 'edited' })
		).rejects.toThrow(/append-only/);
		await expect(testDb()('account_events').where({ subject_user_id: user.id }).delete()).rejects.toThrow(
			/append-only/
		);
	});

	it('keeps an ended session ended, so nothing can bring a copied cookie back', async () => {
		const user = await aUser('buyer');
		const [session] = await testDb()('user_sessions')
			.insert({ user_id: user.id, ended_at: new Date(), end_reason: 'signed out' })
			.returning('id');
		const row = testDb()('user_sessions').where({ id: session.id });
		await expect(row.clone().update({ ended_at: null })).rejects.toThrow(/stays ended/);
		await expect(row.clone().update({ ended_at: new Date(Date.now() + 60_000) })).rejects.toThrow(
			/stays ended/
		);
		await row.clone().update({ last_seen: new Date() });
	});
});
