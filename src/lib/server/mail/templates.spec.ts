import { describe, expect, it } from 'vitest';
import {
	awardNoticeMail,
	bidReceiptMail,
	bidReminderMail,
	invitationMail,
	regretNoticeMail,
	signInLinkMail
} from './templates';

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

	it('reminds a supplier of its own missing bid with the deadline, the late-bid rule and the link', () => {
		const mail = bidReminderMail('s@example.test', {
			reference: 'EV-9',
			title: 'Cartons',
			buyerName: 'Buyer',
			deadline: '2027-03-02 10:00 (Europe/Berlin)',
			url: 'http://127.0.0.1/supplier/events/9',
			trailHead: { hash: 'ef'.repeat(32) }
		});
		expect(mail.subject).toBe('Reminder: no bid yet for EV-9 Cartons');
		for (const part of [mail.text, mail.html]) {
			expect(part).toContain('your organisation has not yet submitted a bid');
			expect(part).toContain('Bids close at 2027-03-02 10:00 (Europe/Berlin).');
			expect(part).toContain('cannot be accepted');
			expect(part).toContain('http://127.0.0.1/supplier/events/9');
			expect(part).toContain(`newest entry SHA-256 ${'ef'.repeat(32)}`);
		}
	});

	it('carries the decision trail head in receipts and notices, so it is kept outside the database', () => {
		const event = {
			reference: 'EV-1',
			title: 'Boxes',
			buyerName: 'Buyer',
			deadline: '2027-03-02 10:00 (UTC)',
			url: 'http://127.0.0.1/supplier/events/1',
			currency: 'EUR',
			trailHead: { hash: 'ab'.repeat(32) }
		};
		const head = `Decision trail of EV-1 at this moment: newest entry SHA-256 ${'ab'.repeat(32)}.`;
		const mails = [
			bidReceiptMail('s@example.test', event, {
				revision: 2,
				receivedAt: '2027-03-01T10:00:00Z',
				fileName: 'bid.xlsx',
				sha256: 'cd'.repeat(32),
				lines: 3
			}),
			awardNoticeMail('s@example.test', event, {
				supplierName: 'S',
				lines: [],
				standstillEndsOn: '2027-03-12'
			}),
			regretNoticeMail('s@example.test', event, { supplierName: 'S', standstillEndsOn: '2027-03-12' })
		];
		for (const mail of mails) {
			expect(mail.text).toContain(head);
			expect(mail.html).toContain(head);
		}
		expect(
			bidReceiptMail(
				's@example.test',
				{ ...event, trailHead: null },
				{
					revision: 1,
					receivedAt: '2027-03-01T10:00:00Z',
					fileName: null,
					sha256: null,
					lines: 1
				}
			).text
		).not.toContain('Decision trail');
	});

	// ISO 4217: the yen has no minor unit, the Bahraini dinar three; thousands grouped as in English.
	it('writes the award notice’s amounts in the currency’s minor units, with thousands separators', () => {
		const event = {
			reference: 'EV-2',
			title: 'Bolts',
			buyerName: 'Buyer',
			deadline: '2027-03-02 10:00 (UTC)',
			url: 'http://127.0.0.1/supplier/events/2'
		};
		const line = { item: 'IT-1', quantity: 12_500, unitPrice: 1_234.5, cost: 15_431_250 };
		const yen = awardNoticeMail(
			's@example.test',
			{ ...event, currency: 'JPY' },
			{
				supplierName: 'S',
				lines: [line],
				standstillEndsOn: '2027-03-12'
			}
		).text;
		expect(yen).toContain('IT-1: 12,500 at 1,234.5 JPY = 15,431,250 JPY');
		expect(yen).toContain('Total: 15,431,250 JPY');
		const dinar = awardNoticeMail(
			's@example.test',
			{ ...event, currency: 'BHD' },
			{
				supplierName: 'S',
				lines: [{ item: 'IT-1', quantity: 3, unitPrice: 0.125, cost: 0.375 }],
				standstillEndsOn: '2027-03-12'
			}
		).text;
		expect(dinar).toContain('IT-1: 3 at 0.125 BHD = 0.375 BHD');
		expect(dinar).toContain('Total: 0.375 BHD');
	});
});
