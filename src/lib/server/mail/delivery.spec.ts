import { describe, expect, it } from 'vitest';
import { messageIdFor } from '../services/mail-delivery';
import { refusedBeforeData } from '.';

describe('mail delivery', () => {
	it('derives one Message-ID per idempotency key', () => {
		const id = messageIdFor('notice:1:a@example.test');
		expect(id).toMatch(/^<[0-9a-f]{40}@mail\.tenderloom>$/);
		expect(messageIdFor('notice:1:a@example.test')).toBe(id);
		expect(messageIdFor('notice:1:b@example.test')).not.toBe(id);
	});

	it('tells a refusal before the message data (safe to send again) from a failure after it (perhaps sent)', () => {
		// Shapes of nodemailer's errors: a recipient refused, no connection, a timeout after the data.
		expect(refusedBeforeData({ code: 'EENVELOPE', command: 'RCPT TO', responseCode: 451 })).toBe(true);
		expect(refusedBeforeData({ code: 'ECONNECTION', command: 'CONN' })).toBe(true);
		expect(refusedBeforeData({ code: 'ESOCKET', command: 'CONN' })).toBe(true);
		expect(refusedBeforeData({ code: 'ETIMEDOUT', command: 'DATA' })).toBe(false);
		expect(refusedBeforeData({ code: 'EMESSAGE', command: '.' })).toBe(false);
		expect(refusedBeforeData(new Error('socket closed'))).toBe(false);
	});
});
