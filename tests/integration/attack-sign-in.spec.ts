// Attacks on e-mail-link sign-in and on the session cookie, performed against the built server.
import { afterAll, describe, expect, it } from 'vitest';
import { appUrl, mailApi } from '../support/env';
import { aUser, closeTestDb, unique } from '../support/factories';
import { Browserless, rawRequest } from '../support/http';
import { latestMailTo, linkIn } from '../support/mail';

afterAll(closeTestDb);

const ATTACKER = 'attacker.example';

/** The two doors to an e-mailed link: the sign-in page's form action and Auth.js's own endpoint. */
const doors = [
	{
		name: 'the sign-in page',
		path: '/signin?/link',
		fields: (email: string) => ({ providerId: 'nodemailer', email, redirectTo: '/' })
	},
	{
		name: 'the Auth.js endpoint',
		path: '/auth/signin/nodemailer',
		fields: (email: string) => ({ email, callbackUrl: '/' })
	}
];

const forgedHosts: { name: string; headers: Record<string, string> }[] = [
	{ name: 'X-Forwarded-Host', headers: { 'x-forwarded-host': ATTACKER } },
	{
		name: 'X-Forwarded-Host and -Proto',
		headers: { 'x-forwarded-host': ATTACKER, 'x-forwarded-proto': 'https' }
	},
	{ name: 'Host', headers: { host: ATTACKER } },
	{ name: 'Forwarded', headers: { forwarded: `host=${ATTACKER};proto=https` } }
];

function askForLink(path: string, fields: Record<string, string>, headers: Record<string, string> = {}) {
	return rawRequest(path, {
		method: 'POST',
		headers: {
			'content-type': 'application/x-www-form-urlencoded',
			accept: 'text/html',
			origin: appUrl(),
			...headers
		},
		body: new URLSearchParams(fields).toString()
	});
}

describe('sign-in link poisoning', () => {
	for (const door of doors) {
		for (const forged of forgedHosts) {
			it(`mails an admin a link to the configured origin when ${door.name} is asked with a forged ${forged.name}`, async () => {
				const admin = await aUser('admin');
				const sentAfter = new Date();
				const answer = await askForLink(door.path, door.fields(admin.email), forged.headers);
				expect(answer.status).toBeLessThan(400);
				expect(answer.location ?? '').not.toContain(ATTACKER);

				const mail = await latestMailTo(admin.email, { after: sentAfter });
				const link = new URL(linkIn(mail.text));
				expect(link.origin).toBe(new URL(appUrl()).origin);
				expect(link.pathname).toBe('/auth/callback/nodemailer');
				expect(new URL(link.searchParams.get('callbackUrl')!).origin).toBe(new URL(appUrl()).origin);
				expect(`${mail.subject}\n${mail.text}\n${mail.html ?? ''}`).not.toContain(ATTACKER);
			});
		}
	}
});

describe('invitation link poisoning', () => {
	it('mails an invitation link to the configured origin when the admin page is posted with a forged X-Forwarded-Host', async () => {
		const admin = await aUser('admin');
		const client = new Browserless();
		await client.signInWithPassword(admin.email, admin.password!);
		const email = `${unique('invitee')}@example.test`;
		const answer = await client.request('/admin/users?/invite', {
			method: 'POST',
			headers: { 'x-forwarded-host': ATTACKER, 'x-forwarded-proto': 'https' },
			body: new URLSearchParams({
				email,
				name: 'Invited Person',
				role: 'buyer',
				supplierOrganisationId: '',
				newSupplierName: ''
			})
		});
		expect(answer.status).toBe(200);
		const mail = await latestMailTo(email);
		expect(new URL(linkIn(mail.text)).origin).toBe(new URL(appUrl()).origin);
		expect(`${mail.text}\n${mail.html ?? ''}`).not.toContain(ATTACKER);
	});
});

/** What a person (or a script) sees after asking for a link: the answer and the page it leads to. */
async function whatTheAskerSees(path: string, fields: Record<string, string>) {
	const client = new Browserless();
	const answer = await client.postForm(path, fields);
	const status = answer.status;
	const location = answer.headers.get('location');
	const { response, url } = await client.follow(answer);
	// A per-response nonce is the only part of a page allowed to differ.
	const page = (await response.text()).replace(/nonce="[^"]*"/g, '');
	return { status, location, finalPath: new URL(url).pathname, finalStatus: response.status, page };
}

const median = (values: number[]) => [...values].sort((a, b) => a - b)[Math.floor(values.length / 2)]!;

describe('account enumeration through e-mail-link sign-in', () => {
	for (const door of doors) {
		it(`answers a registered, an unknown and a deactivated address the same way through ${door.name}`, async () => {
			const registered = await aUser('supplier');
			const deactivated = await aUser('buyer', { deactivated: true });
			const unknown = `${unique('nobody')}@example.test`;
			const seen = await Promise.all(
				[registered.email, unknown, deactivated.email].map((email) =>
					whatTheAskerSees(door.path, door.fields(email))
				)
			);
			expect(seen[0]!.finalPath).toBe('/signin/check-email');
			expect(seen[1]).toEqual(seen[0]);
			expect(seen[2]).toEqual(seen[0]);
		});
	}

	it('answers a registered address before its mail is sent, so a slow or failing relay shows nothing', async () => {
		const registered = await aUser('supplier');
		const outage = `${mailApi()}/outages/${encodeURIComponent(registered.email)}`;
		await fetch(outage, { method: 'PUT' });
		try {
			const door = doors[0]!;
			const forRegistered = await askForLink(door.path, door.fields(registered.email));
			const forUnknown = await askForLink(door.path, door.fields(`${unique('nobody')}@example.test`));
			expect({ status: forRegistered.status, location: forRegistered.location }).toEqual({
				status: forUnknown.status,
				location: forUnknown.location
			});
		} finally {
			await fetch(outage, { method: 'DELETE' });
		}
	});

	it('takes about as long for a registered address as for an unknown one', async () => {
		const door = doors[0]!;
		const timed = async (email: string) => {
			const started = performance.now();
			await askForLink(door.path, door.fields(email));
			return performance.now() - started;
		};
		const registered: number[] = [];
		const unknown: number[] = [];
		// Fresh addresses each time, so the per-address throttle never answers instead.
		for (let i = 0; i < 5; i++) {
			registered.push(await timed((await aUser('supplier')).email));
			unknown.push(await timed(`${unique('nobody')}@example.test`));
		}
		// Generous on a shared machine; the sending itself took about 5 times the unknown case.
		expect(median(registered)).toBeLessThanOrEqual(3 * median(unknown) + 150);
	});
});

/** The attributes of a Set-Cookie line other than its value and lifetime, in a comparable form. */
function flagsOf(line: string): { name: string; flags: string[] } {
	const [pair, ...attributes] = line.split(';').map((part) => part.trim());
	const flags = attributes
		.map((a) => a.toLowerCase())
		.filter((a) => !a.startsWith('expires=') && !a.startsWith('max-age='))
		.sort();
	return { name: pair!.slice(0, pair!.indexOf('=')), flags };
}

const sessionCookieLine = (lines: string[]) =>
	lines.find((l) => /^(__Secure-)?authjs\.session-token=[^;]/.test(l));

describe('session cookie flags', () => {
	it('sets the session cookie with the same flags at sign-in and on renewal, and no Secure over http', async () => {
		const buyer = await aUser('buyer');
		const signIn = await fetch(`${appUrl()}/auth/callback/credentials`, {
			method: 'POST',
			redirect: 'manual',
			headers: { origin: appUrl(), 'content-type': 'application/x-www-form-urlencoded' },
			body: new URLSearchParams({ email: buyer.email, password: buyer.password!, redirectTo: '/' })
		});
		const atSignIn = sessionCookieLine(signIn.headers.getSetCookie());
		expect(atSignIn).toBeDefined();
		const cookie = atSignIn!.split(';')[0]!;

		const renewal = await fetch(`${appUrl()}/api/me`, { headers: { cookie, accept: 'application/json' } });
		expect(renewal.status).toBe(200);
		const onRenewal = sessionCookieLine(renewal.headers.getSetCookie());
		expect(onRenewal).toBeDefined();

		expect(flagsOf(onRenewal!)).toEqual(flagsOf(atSignIn!));
		const { name, flags } = flagsOf(atSignIn!);
		expect(name).toBe('authjs.session-token');
		expect(flags).toEqual(expect.arrayContaining(['httponly', 'samesite=lax', 'path=/']));
		expect(flags).not.toContain('secure');
	});

	it('sets the same flags when signing in through the sign-in page', async () => {
		const buyer = await aUser('buyer');
		const answer = await rawRequest('/signin?/password', {
			method: 'POST',
			headers: {
				'content-type': 'application/x-www-form-urlencoded',
				accept: 'text/html',
				origin: appUrl(),
				'x-forwarded-proto': 'https'
			},
			body: new URLSearchParams({
				providerId: 'credentials',
				email: buyer.email,
				password: buyer.password!,
				redirectTo: '/'
			}).toString()
		});
		const line = sessionCookieLine(answer.setCookie);
		expect(line).toBeDefined();
		const { name, flags } = flagsOf(line!);
		expect(name).toBe('authjs.session-token');
		expect(flags).toEqual(['httponly', 'path=/', 'samesite=lax']);
	});
});
