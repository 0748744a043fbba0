// Finding 10 of issue 9: answers carried no CSP, no framing or sniffing guard, no referrer policy, and
// price-bearing answers could be kept by caches. Every answer the app renders now carries them.
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { Browserless } from '../support/http';
import { closeTestDb } from '../support/factories';
import { aSignedInUser, aSupplierOrganisationWithUser, anOpenEvent, signedIn } from '../support/events';

afterAll(closeTestDb);

function expectSecurityHeaders(response: Response) {
	const h = response.headers;
	const csp = h.get('content-security-policy') ?? '';
	expect(csp).toContain("default-src 'self'");
	expect(csp).toContain("frame-ancestors 'none'");
	expect(csp).toContain("object-src 'none'");
	expect(csp).toContain("base-uri 'self'");
	expect(csp).toContain("form-action 'self'");
	expect(csp).not.toMatch(/script-src[^;]*unsafe-inline/);
	expect(h.get('x-frame-options')).toBe('DENY');
	expect(h.get('x-content-type-options')).toBe('nosniff');
	expect(h.get('referrer-policy')).toBe('strict-origin-when-cross-origin');
	expect(h.get('permissions-policy')).toContain('camera=()');
	expect(h.get('cache-control')).toBe('no-store');
	// the test server's origin is plain http: HSTS there would be wrong
	expect(h.get('strict-transport-security')).toBeNull();
}

let buyer: Browserless;
let bidder: Browserless;
let eventId: string;

beforeAll(async () => {
	const signedInBuyer = await aSignedInUser('buyer');
	buyer = signedInBuyer.client;
	const { organisation, user } = await aSupplierOrganisationWithUser();
	bidder = await signedIn(user);
	eventId = (await anOpenEvent({ createdBy: signedInBuyer.user.id, invite: [organisation.id] })).id;
});

describe('security headers', () => {
	it('sends them with a page, whose scripts run only with the nonce of this answer', async () => {
		const response = await buyer.get(`/buyer/events/${eventId}`);
		expect(response.status).toBe(200);
		expectSecurityHeaders(response);
		const nonce = /script-src 'self' 'nonce-([^']+)'/.exec(
			response.headers.get('content-security-policy')!
		)?.[1];
		expect(nonce).toBeTruthy();
		const html = await response.text();
		expect(html).toContain(`nonce="${nonce}"`);
		const again = await buyer.get(`/buyer/events/${eventId}`);
		expect(again.headers.get('content-security-policy')).not.toContain(nonce);
	});

	it('sends them with an API answer in JSON', async () => {
		const response = await buyer.get(`/api/events/${eventId}`, 'application/json');
		expect(response.status).toBe(200);
		expect(response.headers.get('content-type')).toContain('application/json');
		expectSecurityHeaders(response);
	});

	it('sends them with a file download', async () => {
		const response = await bidder.get(`/api/events/${eventId}/bid-sheet`);
		expect(response.status).toBe(200);
		expect(response.headers.get('content-disposition')).toContain('attachment');
		expectSecurityHeaders(response);
	});

	it('sends them with the 404 page', async () => {
		const response = await buyer.get('/no-such-page');
		expect(response.status).toBe(404);
		expectSecurityHeaders(response);
	});

	it('sends them with a refusal from the hooks, keeping its message and error id', async () => {
		const response = await buyer.get('/admin');
		expect(response.status).toBe(403);
		expectSecurityHeaders(response);
		expect(await response.text()).toMatch(
			/Your role does not give access to this page\. Error id: [0-9a-f]{8}\./
		);
	});

	it('sends them with a redirect to the sign-in page and with the sign-in page', async () => {
		const anonymous = new Browserless();
		const redirect = await anonymous.get(`/buyer/events/${eventId}`);
		expect(redirect.status).toBe(303);
		expect(redirect.headers.get('x-frame-options')).toBe('DENY');
		expect(redirect.headers.get('cache-control')).toBe('no-store');
		expectSecurityHeaders(await anonymous.get('/signin'));
	});

	it('sends them with the answers of the sign-in library', async () => {
		expectSecurityHeaders(await new Browserless().get('/auth/session', 'application/json'));
	});

	it('leaves the long caching of the built, content-hashed assets alone', async () => {
		const html = await (await new Browserless().get('/signin')).text();
		const asset = /\/_app\/immutable\/[^"']+\.js/.exec(html)?.[0];
		expect(asset).toBeTruthy();
		const response = await new Browserless().get(asset!, '*/*');
		expect(response.status).toBe(200);
		expect(response.headers.get('cache-control')).toContain('immutable');
	});
});
