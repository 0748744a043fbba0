import { describe, expect, it } from 'vitest';
import { invitationMail, signInLinkMail } from './templates';

const now = new Date('2027-03-01T10:00:00Z');

describe('mail templates', () => {
	it('states how long a sign-in link works', () => {
		const mail = signInLinkMail(
			's@example.test',
			'http://127.0.0.1/auth/x',
			new Date('2027-03-01T10:15:00Z'),
			now
		);
		expect(mail.text).toContain('It works once and for 15 minutes.');
		expect(mail.text).toContain('Sign in: http://127.0.0.1/auth/x');
	});

	it('escapes every inserted value in the HTML part', () => {
		const mail = invitationMail(
			'x@example.test',
			{
				inviterName: '<script>alert(1)</script>',
				organisationName: 'Osk & Vale',
				roleName: 'buyer',
				url: 'http://127.0.0.1/?a=1&b="2"',
				expires: new Date('2027-03-04T10:00:00Z')
			},
			now
		);
		expect(mail.html).not.toContain('<script>');
		expect(mail.html).toContain('&lt;script&gt;');
		expect(mail.html).toContain('Osk &amp; Vale');
		expect(mail.html).toContain('href="http://127.0.0.1/?a=1&amp;b=&quot;2&quot;"');
		expect(mail.text).toContain('works for 72 hours');
	});
});
