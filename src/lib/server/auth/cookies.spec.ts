import { describe, expect, it } from 'vitest';
import { sessionCookiePolicy } from './cookies';

describe('session cookie flags', () => {
	it('marks the cookies Secure, with the __Secure- name, when the public origin is https', () => {
		expect(sessionCookiePolicy('https://tenders.example.org')).toEqual({
			secure: true,
			httpOnly: true,
			sameSite: 'lax',
			sessionCookieName: '__Secure-authjs.session-token'
		});
	});

	it('leaves Secure off over plain http, where the browser would not send such a cookie back', () => {
		expect(sessionCookiePolicy('http://127.0.0.1:3000')).toEqual({
			secure: false,
			httpOnly: true,
			sameSite: 'lax',
			sessionCookieName: 'authjs.session-token'
		});
	});
});
