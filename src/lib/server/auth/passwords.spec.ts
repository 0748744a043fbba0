import { describe, expect, it } from 'vitest';
import { hashPassword, passwordProblems, verifyPassword } from './passwords';

describe('passwords', () => {
	it('verifies the password a hash was made from, and no other', async () => {
		const hash = await hashPassword('correct horse battery');
		expect(hash).toMatch(/^\$2[ab]\$12\$/);
		expect(await verifyPassword('correct horse battery', hash)).toBe(true);
		expect(await verifyPassword('correct horse batterY', hash)).toBe(false);
	});

	it('never verifies against a missing hash', async () => {
		expect(await verifyPassword('no account has this password', null)).toBe(false);
	});

	it('asks for 12 characters and at most the 72 bytes bcrypt reads', () => {
		expect(passwordProblems('short')).toEqual(['Use at least 12 characters.']);
		expect(passwordProblems('x'.repeat(73))).toHaveLength(1);
		expect(passwordProblems('ü'.repeat(40))).toHaveLength(1);
		expect(passwordProblems('a good long passphrase')).toEqual([]);
	});
});
