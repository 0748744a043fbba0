// Checked against Auth.js's own encoder and decoder (@auth/core/jwt, the version installed beside
// @auth/sveltekit): a session cookie made by either reads with the other, so swapping the codec signs
// nobody out and a cookie made here is one Auth.js would accept.
import { decode as authDecode, encode as authEncode } from '@auth/core/jwt';
import { afterEach, describe, expect, it, vi } from 'vitest';
import { REISSUE_AFTER_SECONDS, sessionTokenCodec, type TokenSeen } from './session-token';

const secret = 'a-test-secret-of-thirty-two-bytes-or-more';
const salt = 'authjs.session-token';
const claims = {
	sub: '42',
	sid: '0f8fad5b-d9cb-469f-a165-70867728950e',
	sessionUser: {
		id: 42,
		name: 'A Buyer',
		email: 'buyer@example.test',
		role: 'buyer' as const,
		organisationId: 'org-1',
		organisationName: 'A buying organisation'
	}
};
const maxAge = 8 * 3600;

afterEach(() => vi.useRealTimers());

describe('the session token codec', () => {
	it('reads a token made by Auth.js, and Auth.js reads a token made here', async () => {
		const codec = sessionTokenCodec(() => undefined);
		const byAuthJs = await authEncode({ token: claims, secret, salt, maxAge });
		expect(await codec.decode({ token: byAuthJs, secret, salt })).toMatchObject(claims);
		const ours = await codec.encode({ token: claims, secret, salt, maxAge });
		const read = await authDecode({ token: ours, secret, salt });
		expect(read).toMatchObject(claims);
		// Auth.js's claims: issued now, expiring after maxAge, a fresh id.
		expect(read!.exp! - read!.iat!).toBe(maxAge);
		expect(read!.jti).toMatch(/^[0-9a-f-]{36}$/);
	});

	it('refuses a token under another secret or salt', async () => {
		const codec = sessionTokenCodec(() => undefined);
		const token = await codec.encode({ token: claims, secret, salt, maxAge });
		await expect(codec.decode({ token, secret: `${secret}-other`, salt })).rejects.toThrow();
		await expect(codec.decode({ token, secret, salt: 'another-cookie' })).rejects.toThrow();
	});

	it('gives back the token a request came with while it is recent and names the same session', async () => {
		const request: { token?: TokenSeen } = {};
		const codec = sessionTokenCodec(() => request);
		const token = await authEncode({ token: claims, secret, salt, maxAge });
		const read = await codec.decode({ token, secret, salt });
		expect(await codec.encode({ token: read!, secret, salt, maxAge })).toBe(token);
		// Another role (the user row changed): a new token carrying it.
		const promoted = { ...read!, sessionUser: { ...claims.sessionUser, role: 'approver' as const } };
		const reissued = await codec.encode({ token: promoted, secret, salt, maxAge });
		expect(reissued).not.toBe(token);
		expect((await authDecode({ token: reissued, secret, salt }))!.sessionUser).toEqual(promoted.sessionUser);
	});

	it('makes a new token with a later expiry once the one it came with is older than the window', async () => {
		vi.useFakeTimers({ toFake: ['Date'] });
		vi.setSystemTime(new Date('2026-12-02T09:00:00Z'));
		const token = await authEncode({ token: claims, secret, salt, maxAge });
		vi.setSystemTime(new Date(Date.now() + (REISSUE_AFTER_SECONDS + 1) * 1000));
		const request: { token?: TokenSeen } = {};
		const codec = sessionTokenCodec(() => request);
		const read = await codec.decode({ token, secret, salt });
		const renewed = await codec.encode({ token: read!, secret, salt, maxAge });
		expect(renewed).not.toBe(token);
		expect((await authDecode({ token: renewed, secret, salt }))!.exp).toBe(
			read!.exp! + REISSUE_AFTER_SECONDS + 1
		);
	});

	it('reads a token it has read before only while it is valid, and only under its own secret', async () => {
		vi.useFakeTimers({ toFake: ['Date'] });
		vi.setSystemTime(new Date('2026-12-02T09:00:00Z'));
		const codec = sessionTokenCodec(() => undefined);
		const token = await authEncode({ token: claims, secret, salt, maxAge });
		const first = await codec.decode({ token, secret, salt });
		first!.sub = 'changed by a caller';
		expect(await codec.decode({ token, secret, salt })).toMatchObject(claims);
		await expect(codec.decode({ token, secret: `${secret}-other`, salt })).rejects.toThrow();
		// jose allows 15 s of clock skew past "exp" (Auth.js's setting); one second more and it is refused.
		vi.setSystemTime(new Date(Date.now() + (maxAge + 16) * 1000));
		await expect(codec.decode({ token, secret, salt })).rejects.toThrow(/exp/);
	});

	it('always makes a new token outside a request', async () => {
		const codec = sessionTokenCodec(() => undefined);
		const token = await authEncode({ token: claims, secret, salt, maxAge });
		const read = await codec.decode({ token, secret, salt });
		expect(await codec.encode({ token: read!, secret, salt, maxAge })).not.toBe(token);
	});
});
