import { afterAll, describe, expect, it } from 'vitest';
import { countSignInRequest, describeWait } from '../../src/lib/server/auth/rate-limit';
import { closeDb } from '../../src/lib/server/db/knex';
import { unique } from '../support/factories';

afterAll(closeDb);

describe('sign-in throttles kept in PostgreSQL', () => {
	it('allows 60 sign-in requests from one address in ten minutes, then names the wait', async () => {
		const address = unique('198.51.100.7');
		for (let i = 0; i < 60; i++) expect((await countSignInRequest(address)).blocked).toBe(false);
		const blocked = await countSignInRequest(address);
		expect(blocked.blocked).toBe(true);
		if (blocked.blocked) expect(blocked.retryAfterSeconds).toBeGreaterThan(9 * 60);
	});

	it('counts each address on its own', async () => {
		const [one, other] = [unique('203.0.113.1'), unique('203.0.113.2')];
		for (let i = 0; i < 61; i++) await countSignInRequest(one);
		expect((await countSignInRequest(other)).blocked).toBe(false);
	});

	it('words a wait for a person', () => {
		expect(describeWait(1)).toBe('1 second');
		expect(describeWait(45)).toBe('45 seconds');
		expect(describeWait(60)).toBe('1 minute');
		expect(describeWait(61)).toBe('2 minutes');
		expect(describeWait(900)).toBe('15 minutes');
	});
});
