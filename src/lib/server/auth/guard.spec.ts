import { describe, expect, it } from 'vitest';
import { isPublicPath, isSignOut, rolesFor } from './guard';

describe('route areas', () => {
	it('gives each signed-in area to its role', () => {
		expect(rolesFor('/buyer')).toEqual(['buyer']);
		expect(rolesFor('/buyer/events/12')).toEqual(['buyer']);
		expect(rolesFor('/admin/users')).toEqual(['admin']);
		expect(rolesFor('/api/organisations')).toEqual(['admin', 'buyer']);
	});

	it('does not mistake a longer word for an area', () => {
		expect(rolesFor('/buyers-guide')).toBeNull();
		expect(rolesFor('/administration')).toBeNull();
	});

	it('keeps only sign-in, Auth.js, health, the dev mailbox and assets public', () => {
		for (const path of [
			'/',
			'/signin',
			'/signin/error',
			'/auth/callback/nodemailer',
			'/healthz',
			'/dev/mailbox',
			'/_app/x.js'
		]) {
			expect(isPublicPath(path), path).toBe(true);
		}
		for (const path of ['/buyer', '/api/me', '/account', '/admin', '/signinx'])
			expect(isPublicPath(path), path).toBe(false);
	});

	it('recognises sign-out, the one write an auditor may send', () => {
		expect(isSignOut('/signout')).toBe(true);
		expect(isSignOut('/auth/signout')).toBe(true);
		expect(isSignOut('/signout/everywhere')).toBe(true);
		expect(isSignOut('/account')).toBe(false);
	});
});
