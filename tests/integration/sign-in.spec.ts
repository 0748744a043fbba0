import { afterAll, describe, expect, it } from 'vitest';
import { createSignInLink } from '../../src/lib/server/auth/sign-in-links';
import { db, closeDb } from '../../src/lib/server/db/knex';
import { inviteUser, setActive, setOwnPassword } from '../../src/lib/server/services/users';
import { appUrl } from '../support/env';
import { aUser, anOrganisation, closeTestDb, testDb, unique } from '../support/factories';
import { Browserless } from '../support/http';
import { latestMailTo, linkIn, mailTo } from '../support/mail';

afterAll(async () => {
	await closeTestDb();
	await closeDb();
});

const sessionUser = (u: {
	id: number;
	email: string;
	name: string;
	role: 'admin';
	organisationId: string;
}) => ({
	...u,
	organisationName: 'Test buying organisation'
});

async function failedSignInPage(email: string, password: string) {
	const client = new Browserless();
	const { response, url } = await client.signInWithPassword(email, password);
	return { url, html: await response.text(), session: await client.session() };
}

const ONE_MESSAGE = 'The e-mail address or password is not right.';

describe('password sign-in', () => {
	it('signs a staff member in and lands on the home of the role', async () => {
		const buyer = await aUser('buyer');
		const client = new Browserless();
		const { url } = await client.signInWithPassword(buyer.email, buyer.password!);
		expect(new URL(url).pathname).toBe('/buyer');
		expect(await client.session()).toMatchObject({ user: { email: buyer.email, role: 'buyer' } });
	});

	it('gives one message for a wrong password, an unknown account, a supplier and a deactivated account', async () => {
		const buyer = await aUser('buyer');
		const supplier = await aUser('supplier');
		const gone = await aUser('approver', { deactivated: true });
		const outcomes = await Promise.all([
			failedSignInPage(buyer.email, 'not the password'),
			failedSignInPage(`${unique('nobody')}@example.test`, 'whatever it is'),
			failedSignInPage(supplier.email, 'whatever it is'),
			failedSignInPage(gone.email, gone.password!)
		]);
		for (const outcome of outcomes) {
			expect(new URL(outcome.url).search).toBe('?error=CredentialsSignin&code=credentials');
			expect(outcome.html).toContain(ONE_MESSAGE);
			expect(outcome.session).toBeNull();
		}
	});

	it('shows the wait after too many failed attempts, and refuses even the right password meanwhile', async () => {
		const buyer = await aUser('buyer');
		for (let attempt = 1; attempt <= 5; attempt++) {
			expect((await failedSignInPage(buyer.email, `wrong ${attempt}`)).html).toContain(ONE_MESSAGE);
		}
		const sixth = await failedSignInPage(buyer.email, 'wrong 6');
		expect(new URL(sixth.url).searchParams.get('code')).toMatch(/^wait-\d+$/);
		expect(sixth.html).toMatch(
			/Too many sign-in attempts\. For your account’s safety, please wait (1[0-5]|[1-9]) minutes? and try again\./
		);
		const rightButBlocked = await failedSignInPage(buyer.email, buyer.password!);
		expect(rightButBlocked.html).toContain('Too many sign-in attempts');
		expect(rightButBlocked.session).toBeNull();
	});

	it('lets a staff member set a password and sign in with it', async () => {
		const admin = await aUser('admin', { password: null });
		const organisationId = admin.organisationId;
		await setOwnPassword(
			sessionUser({ id: admin.id, email: admin.email, name: admin.name, role: 'admin', organisationId }),
			{ currentPassword: '', newPassword: 'a fresh long passphrase' },
			{ origin: appUrl(), ip: null }
		);
		const { url } = await new Browserless().signInWithPassword(admin.email, 'a fresh long passphrase');
		expect(new URL(url).pathname).toBe('/admin');
	});
});

describe('e-mail link sign-in', () => {
	it('mails a link that signs a supplier in once', async () => {
		const supplier = await aUser('supplier');
		const client = new Browserless();
		const asked = await client.requestSignInLink(supplier.email);
		expect(new URL(asked.url).pathname).toBe('/signin/check-email');
		const mail = await latestMailTo(supplier.email);
		expect(mail.subject).toBe('Your Tenderloom sign-in link');
		const { url } = await client.follow(await client.get(linkIn(mail.text)));
		expect(new URL(url).pathname).toBe('/supplier');
		expect(await client.session()).toMatchObject({ user: { email: supplier.email, role: 'supplier' } });
	});

	it('shows the same page for an unknown address and sends nothing', async () => {
		const nobody = `${unique('nobody')}@example.test`;
		const asked = await new Browserless().requestSignInLink(nobody);
		expect(new URL(asked.url).pathname).toBe('/signin/check-email');
		await new Promise((r) => setTimeout(r, 500));
		expect(await mailTo(nobody)).toEqual([]);
	});

	it('explains a used link and offers a new one', async () => {
		const supplier = await aUser('supplier');
		const first = new Browserless();
		await first.signInByEmailLink(supplier.email);
		const link = linkIn((await latestMailTo(supplier.email)).text);
		const second = new Browserless();
		const { response, url } = await second.follow(await second.get(link));
		expect(new URL(url).pathname).toBe('/signin/error');
		const html = await response.text();
		expect(html).toContain('This sign-in link no longer works');
		expect(html).toContain('Send me a new link');
		expect(await second.session()).toBeNull();
	});

	it('explains an expired link the same way', async () => {
		const supplier = await aUser('supplier');
		const { url: link } = await createSignInLink(db(), {
			email: supplier.email,
			callbackPath: '/',
			validForHours: -1
		});
		const client = new Browserless();
		const { response, url } = await client.follow(await client.get(link));
		expect(new URL(url).pathname).toBe('/signin/error');
		expect(await response.text()).toContain('has expired or has already been used');
	});

	it('limits how many links one address can ask for, and says how long to wait', async () => {
		const supplier = await aUser('supplier');
		const client = new Browserless();
		for (let i = 0; i < 5; i++) await client.requestSignInLink(supplier.email);
		const { response, url } = await client.requestSignInLink(supplier.email);
		expect(new URL(url).searchParams.get('error')).toBe('TooManyAttempts');
		expect(await response.text()).toMatch(/please wait \d+ minutes?/);
	});
});

describe('accounts managed by an administrator', () => {
	it('invites a supplier user whose e-mailed link signs it in to its new organisation', async () => {
		const admin = await aUser('admin');
		const email = `${unique('invitee')}@example.test`;
		const organisation = unique('Invited supplier');
		const { user, mailed } = await inviteUser(
			sessionUser({
				id: admin.id,
				email: admin.email,
				name: admin.name,
				role: 'admin',
				organisationId: admin.organisationId
			}),
			{
				email,
				name: 'Invited Person',
				role: 'supplier',
				supplierOrganisationId: '',
				newSupplierName: organisation
			},
			{ origin: appUrl(), ip: '127.0.0.1' }
		);
		expect(mailed).toBe(true);
		expect(user.organisation_name).toBe(organisation);
		const mail = await latestMailTo(email);
		expect(mail.subject).toBe('You are invited to Tenderloom');
		expect(mail.text).toContain(`as supplier for ${organisation}`);
		const client = new Browserless();
		const { url } = await client.follow(await client.get(linkIn(mail.text)));
		expect(new URL(url).pathname).toBe('/supplier');
		expect(await client.session()).toMatchObject({
			user: { email, role: 'supplier', organisationName: organisation }
		});
	});

	it('invites through the admin page and reports a duplicate address at its field', async () => {
		const admin = await aUser('admin');
		const client = new Browserless();
		await client.signInWithPassword(admin.email, admin.password!);
		const existing = await aUser('buyer');
		const response = await client.postForm('/admin/users?/invite', {
			email: existing.email,
			name: 'Someone',
			role: 'buyer',
			supplierOrganisationId: '',
			newSupplierName: ''
		});
		expect(response.status).toBe(409);
		expect(await response.text()).toContain(
			`A user with the e-mail address ${existing.email} already exists.`
		);
	});

	it('ends the sessions of a deactivated user at the next request, and notes both in the account log', async () => {
		const admin = await aUser('admin');
		const buyer = await aUser('buyer');
		const client = new Browserless();
		await client.signInWithPassword(buyer.email, buyer.password!);
		expect((await client.get('/api/me', 'application/json')).status).toBe(200);
		await setActive(
			sessionUser({
				id: admin.id,
				email: admin.email,
				name: admin.name,
				role: 'admin',
				organisationId: admin.organisationId
			}),
			buyer.id,
			false,
			{ origin: appUrl(), ip: null }
		);
		expect((await client.get('/api/me', 'application/json')).status).toBe(401);
		const log = await testDb()('account_events')
			.where({ subject_user_id: buyer.id })
			.orderBy('id')
			.select('action', 'actor_user_id', 'detail');
		expect(log).toEqual([
			{ action: 'user.deactivated', actor_user_id: admin.id, detail: {} },
			{ action: 'user.sessions_ended', actor_user_id: admin.id, detail: { reason: 'deactivated', count: 1 } }
		]);
	});

	it('ends the sessions of a user whose role changes, and the new role applies at the next sign-in', async () => {
		const admin = await aUser('admin');
		const buyer = await aUser('buyer');
		const adminClient = new Browserless();
		await adminClient.signInWithPassword(admin.email, admin.password!);
		const client = new Browserless();
		await client.signInWithPassword(buyer.email, buyer.password!);
		expect((await client.get('/buyer')).status).toBe(200);
		const changed = await adminClient.postForm('/admin/users?/setRole', {
			userId: String(buyer.id),
			role: 'approver'
		});
		expect(changed.status).toBe(200);
		expect((await client.get('/buyer')).status).toBe(303);
		await client.signInWithPassword(buyer.email, buyer.password!);
		expect((await client.get('/buyer')).status).toBe(403);
		expect((await client.get('/approver')).status).toBe(200);
	});

	it('refuses to turn a supplier user into staff', async () => {
		const admin = await aUser('admin');
		const supplier = await aUser('supplier', { organisationId: (await anOrganisation('supplier')).id });
		// an admin manages only the users of suppliers its organisation works with (here: invited by it)
		await testDb()('users').where({ id: supplier.id }).update({ invited_by: admin.id });
		const client = new Browserless();
		await client.signInWithPassword(admin.email, admin.password!);
		const response = await client.postForm(
			'/admin/users?/setRole',
			{ userId: String(supplier.id), role: 'buyer' },
			'application/json'
		);
		const body = (await response.json()) as { type: string; status: number; data: string };
		expect(body).toMatchObject({ type: 'failure', status: 400 });
		expect(body.data).toContain('invite staff with a staff address instead');
		const row = await testDb()('users').where({ id: supplier.id }).first('role');
		expect(row.role).toBe('supplier');
	});
});
