import { afterAll, describe, expect, it } from 'vitest';
import { aUser, closeTestDb } from '../support/factories';
import { Browserless } from '../support/http';

afterAll(closeTestDb);

async function signedIn(role: 'admin' | 'buyer' | 'approver' | 'auditor') {
	const user = await aUser(role);
	const client = new Browserless();
	await client.signInWithPassword(user.email, user.password!);
	return { user, client };
}

async function signedInSupplier() {
	const user = await aUser('supplier');
	const client = new Browserless();
	await client.signInByEmailLink(user.email);
	return { user, client };
}

describe('who may reach what', () => {
	it('sends an anonymous visitor of a signed-in page to sign-in, keeping the address to come back to', async () => {
		const response = await new Browserless().get('/buyer?tab=x');
		expect(response.status).toBe(303);
		expect(response.headers.get('location')).toBe('/signin?callbackUrl=%2Fbuyer%3Ftab%3Dx');
	});

	it('answers an anonymous API request with 401 and a JSON message', async () => {
		const response = await new Browserless().get('/api/me', 'application/json');
		expect(response.status).toBe(401);
		expect(await response.json()).toMatchObject({
			message: 'Sign in to continue.',
			errorId: expect.any(String)
		});
	});

	it('refuses a supplier on a buyer page with 403', async () => {
		const { client } = await signedInSupplier();
		const response = await client.get('/buyer');
		expect(response.status).toBe(403);
		const page = await response.text();
		expect(page).toContain('<h1>This page could not be shown</h1>');
		expect(page).toContain('Your role does not give access to this page.');
		// Issue 13: this page was set in another font. It loads the app's own Public Sans, served here.
		const font = /url\('(\/fonts\/public-sans-latin-400-normal\.woff2)'\)/.exec(page)?.[1];
		expect(font).toBeDefined();
		const file = await client.get(font!);
		expect(file.status).toBe(200);
		expect(file.headers.get('content-type')).toBe('font/woff2');
	});

	it('refuses a supplier on a buyer API route with 403', async () => {
		const { client } = await signedInSupplier();
		const response = await client.get('/api/organisations', 'application/json');
		expect(response.status).toBe(403);
		expect(await response.json()).toMatchObject({ errorId: expect.any(String) });
	});

	it('lets a buyer read the buyer API route', async () => {
		const { client } = await signedIn('buyer');
		const response = await client.get('/api/organisations', 'application/json');
		expect(response.status).toBe(200);
		expect(Array.isArray(await response.json())).toBe(true);
	});

	it('keeps each role to its own home', async () => {
		const homes = { admin: '/admin', buyer: '/buyer', approver: '/approver', auditor: '/audit' } as const;
		for (const role of Object.keys(homes) as (keyof typeof homes)[]) {
			const { client } = await signedIn(role);
			for (const [other, path] of Object.entries(homes)) {
				expect((await client.get(path)).status, `${role} on ${path}`).toBe(other === role ? 200 : 403);
			}
		}
	});

	it('refuses every POST from an auditor, pages, actions and API alike', async () => {
		const { client } = await signedIn('auditor');
		const attempts = ['/account', '/admin/users?/invite', '/api/organisations', '/api/me', '/audit'];
		for (const path of attempts) {
			const response = await client.postForm(path, { anything: '1' }, 'application/json');
			expect(response.status, path).toBe(403);
		}
		for (const method of ['PUT', 'PATCH', 'DELETE']) {
			expect((await client.request('/api/me', { method, accept: 'application/json' })).status, method).toBe(
				403
			);
		}
		expect((await client.get('/audit')).status).toBe(200);
	});

	it('lets an auditor sign out', async () => {
		const { client } = await signedIn('auditor');
		const response = await client.postForm('/signout', { redirectTo: '/signin?signedOut=1' });
		expect([302, 303]).toContain(response.status);
		expect(await client.session()).toBeNull();
	});

	it('gives the browser a session without any token, hash or secret', async () => {
		const { user, client } = await signedIn('buyer');
		const session = await client.session();
		expect(Object.keys(session!).sort()).toEqual(['expires', 'user']);
		expect(Object.keys(session!.user as object).sort()).toEqual([
			'email',
			'id',
			'name',
			'organisationId',
			'organisationName',
			'role'
		]);
		expect(session!.user).toMatchObject({
			id: user.id,
			email: user.email,
			role: 'buyer',
			organisationId: user.organisationId
		});
		const text = JSON.stringify(session);
		for (const word of ['password', 'hash', 'token', 'secret', '$2a$', '$2b$'])
			expect(text).not.toContain(word);
	});

	it('shows the signed-in role on the home page', async () => {
		const { client } = await signedIn('approver');
		const html = await (await client.get('/approver')).text();
		expect(html).toMatch(/data-testid="home-role"[^>]*>Approver</);
	});
});
