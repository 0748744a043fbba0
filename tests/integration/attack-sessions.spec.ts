// Attacks on sessions: a copied cookie replayed after the events that should end it.
import { afterAll, describe, expect, it } from 'vitest';
import type { Role } from '../../src/lib/roles';
import { aUser, closeTestDb, testDb } from '../support/factories';
import { Browserless } from '../support/http';

afterAll(closeTestDb);

async function signedIn(role: Role) {
	const user = await aUser(role);
	const client = new Browserless();
	await client.signInWithPassword(user.email, user.password!);
	expect((await client.get('/api/me', 'application/json')).status).toBe(200);
	return { user, client };
}

/** Replays a copied cookie jar as the thief would: the exact cookies, every time. */
async function replay(stolen: Browserless) {
	const api = await stolen.copy().get('/api/me', 'application/json');
	const page = await stolen.copy().get('/account');
	return { api: api.status, page: page.status, pageLocation: page.headers.get('location') };
}

const refused = { api: 401, page: 303, pageLocation: '/signin?callbackUrl=%2Faccount' };

describe('revoking sessions', () => {
	it('refuses a copied session cookie once its owner has signed out', async () => {
		const { client } = await signedIn('buyer');
		const stolen = client.copy();
		expect((await replay(stolen)).api).toBe(200);
		const signOut = await client.postForm('/signout', { redirectTo: '/signin?signedOut=1' });
		expect([302, 303]).toContain(signOut.status);
		expect(await replay(stolen)).toEqual(refused);
	});

	it('ends the session on sign-out even with a stray piece of the session cookie planted beside it', async () => {
		const { client } = await signedIn('buyer');
		const stolen = client.copy();
		// Auth.js reads name, name.0, name.1… as one token: with a piece planted (by a page of a sibling
		// subdomain, say) it could not decode the cookie at sign-out and left the session open.
		client.plantCookie('authjs.session-token.0', 'planted');
		const signOut = await client.postForm('/signout', { redirectTo: '/signin?signedOut=1' });
		expect([302, 303]).toContain(signOut.status);
		expect(await replay(stolen)).toEqual(refused);
	});

	it('clears a stray piece of the session cookie and keeps the session', async () => {
		const { client } = await signedIn('buyer');
		client.plantCookie('authjs.session-token.0', 'planted');
		const answer = await client.get('/api/me', 'application/json');
		expect(answer.status).toBe(200);
		expect(answer.headers.getSetCookie().some((c) => /^authjs\.session-token\.0=;.*Max-Age=0/i.test(c))).toBe(
			true
		);
	});

	it('ends every other session when a password is changed, and keeps the one that changed it', async () => {
		const { user, client: here } = await signedIn('buyer');
		const elsewhere = new Browserless();
		await elsewhere.signInWithPassword(user.email, user.password!);
		const stolen = elsewhere.copy();
		const saved = await here.postForm('/account', {
			currentPassword: user.password!,
			newPassword: 'a brand new passphrase',
			confirmPassword: 'a brand new passphrase'
		});
		expect(saved.status).toBe(200);
		expect(await saved.text()).toContain('Password saved');
		expect((await here.get('/api/me', 'application/json')).status).toBe(200);
		expect(await replay(stolen)).toEqual(refused);
	});

	it('does not revive old sessions when an account is deactivated and reactivated', async () => {
		const { client: admin } = await signedIn('admin');
		const { user, client } = await signedIn('buyer');
		const stolen = client.copy();
		for (const active of ['false', 'true']) {
			const answer = await admin.postForm('/admin/users?/setActive', { userId: String(user.id), active });
			expect(answer.status).toBe(200);
		}
		expect(await replay(stolen)).toEqual(refused);
		const again = new Browserless();
		const { url } = await again.signInWithPassword(user.email, user.password!);
		expect(new URL(url).pathname).toBe('/buyer');
	});

	it('ends every session of a user whose role is changed', async () => {
		const { client: admin } = await signedIn('admin');
		const { user, client } = await signedIn('buyer');
		const stolen = client.copy();
		const changed = await admin.postForm('/admin/users?/setRole', {
			userId: String(user.id),
			role: 'approver'
		});
		expect(changed.status).toBe(200);
		expect(await replay(stolen)).toEqual(refused);
	});

	it('signs out everywhere from the account page, and records it in the account log', async () => {
		const { user, client: here } = await signedIn('approver');
		const elsewhere = new Browserless();
		await elsewhere.signInWithPassword(user.email, user.password!);
		const stolen = elsewhere.copy();
		expect(await (await here.get('/account')).text()).toContain('Sign out everywhere');
		const answer = await here.postForm('/signout/everywhere', {});
		expect([302, 303]).toContain(answer.status);
		expect(answer.headers.get('location')).toContain('/signin?signedOut=1');
		expect(await replay(stolen)).toEqual(refused);
		expect(await replay(here)).toEqual(refused);
		const log = await testDb()('account_events')
			.where({ subject_user_id: user.id, action: 'user.sessions_ended' })
			.select('actor_user_id', 'detail');
		expect(log).toEqual([{ actor_user_id: user.id, detail: { reason: 'signed out everywhere', count: 2 } }]);
	});

	it('lets an auditor sign out everywhere too', async () => {
		const { client } = await signedIn('auditor');
		const stolen = client.copy();
		const answer = await client.postForm('/signout/everywhere', {});
		expect([302, 303]).toContain(answer.status);
		expect(await replay(stolen)).toEqual(refused);
	});
});
