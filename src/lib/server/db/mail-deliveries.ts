// The mail deliveries that make every mail go out once: each is recorded under its idempotency key before
// it is handed to the relay (services/mail-delivery.ts). Leases are the database's own clock, so senders
// on several machines agree.
import type { Db } from './knex';
import type { MailDeliveryRow } from './tables';

export type DeliveryClaim =
	/** This sender holds the delivery: nothing went out under its key yet. */
	| { state: 'claimed'; row: MailDeliveryRow }
	/** This sender holds a delivery whose earlier sender stopped mid-send: it may or may not have gone out. */
	| { state: 'ambiguous'; row: MailDeliveryRow; previousClaim: Date }
	/** Sent already, or settled as unknown: not sent again. */
	| { state: 'sent' | 'unknown'; row: MailDeliveryRow }
	/** Another sender holds it within its lease. */
	| { state: 'in_flight'; row: MailDeliveryRow };

export async function claimDelivery(
	db: Db,
	mail: { key: string; recipient: string; subject: string; messageId: string; sender: string },
	leaseSeconds: number
): Promise<DeliveryClaim> {
	const claim = {
		status: 'sending',
		claimed_at: db.fn.now(),
		sender: mail.sender,
		attempts: db.raw('attempts + 1')
	};
	const [inserted] = await db('mail_deliveries')
		.insert({
			key: mail.key,
			recipient: mail.recipient,
			subject: mail.subject,
			message_id: mail.messageId,
			status: 'sending',
			attempts: 1,
			sender: mail.sender
		})
		.onConflict('key')
		.ignore()
		.returning('*');
	if (inserted) return { state: 'claimed', row: inserted as MailDeliveryRow };
	// The relay refused it before: nothing went out, so it may go again.
	const [retried] = await db('mail_deliveries')
		.where({ key: mail.key, status: 'failed' })
		.update(claim)
		.returning('*');
	if (retried) return { state: 'claimed', row: retried as MailDeliveryRow };
	// A sender that stopped mid-send: re-leased to this one, with the time the earlier one began.
	const { rows: stale } = await db.raw<{ rows: (MailDeliveryRow & { previous_claim: Date })[] }>(
		`update mail_deliveries d
		 set claimed_at = now(), sender = ?, attempts = d.attempts + 1
		 from (select id, claimed_at as previous_claim from mail_deliveries where key = ? for update) p
		 where d.id = p.id and d.status = 'sending' and p.previous_claim < now() - make_interval(secs => ?)
		 returning d.*, p.previous_claim`,
		[mail.sender, mail.key, leaseSeconds]
	);
	if (stale[0]) return { state: 'ambiguous', row: stale[0], previousClaim: stale[0].previous_claim };
	const row = (await db<MailDeliveryRow>('mail_deliveries').where({ key: mail.key }).first())!;
	if (row.status === 'sent' || row.status === 'unknown') return { state: row.status, row };
	return { state: 'in_flight', row };
}

export async function settleDelivery(
	db: Db,
	id: string,
	fields: { status: 'sent' | 'failed' | 'unknown' | 'sending'; sent_at?: Date; last_error?: string | null }
): Promise<void> {
	await db('mail_deliveries')
		.where({ id })
		.update({
			...fields,
			...(fields.sent_at ? { sent_at: db.raw('coalesce(sent_at, ?)', [fields.sent_at]) } : {})
		});
}

/** Leaves a delivery "sending" but past its lease, so the next attempt settles it at once. */
export async function releaseAmbiguousDelivery(
	db: Db,
	id: string,
	leaseSeconds: number,
	error: string
): Promise<void> {
	await db('mail_deliveries')
		.where({ id })
		.update({
			claimed_at: db.raw(`now() - make_interval(secs => ?)`, [leaseSeconds + 1]),
			last_error: error
		});
}
