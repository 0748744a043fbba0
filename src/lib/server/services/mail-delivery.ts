// Mail exactly once. Each mail has an idempotency key (notice:<notice>:<address>, mail:<job id>, …); its
// delivery is recorded as "sending" under that key, with a Message-ID derived from the key, BEFORE the
// relay is reached, and as "sent" right after the relay accepts it. A redelivered job finds the key and
// does not send again. The one moment that stays uncertain is a sender that died after the relay may have
// accepted the message and before "sent" was recorded; such a delivery is settled by the next attempt once
// its lease has passed: where the relay can be asked by Message-ID (the local SMTP fake), its answer
// decides (sent, or send now); where it cannot (an ordinary SMTP relay), the delivery is recorded as
// "unknown" and NOT sent again — at most once, for a person to check (logged, and counted on the notice's
// trail entry), rather than a second award notice.
import { createHash } from 'node:crypto';
import { now } from '../clock';
import { claimDelivery, releaseAmbiguousDelivery, settleDelivery } from '../db/mail-deliveries';
import { db, type Db } from '../db/knex';
import {
	refusedBeforeData,
	relayHasMessage,
	SEND_TIMEOUT_SECONDS,
	sendMail,
	senderName,
	type OutgoingMail
} from '../mail';

/** A delivery held longer than this by a sender is taken to be abandoned (its sender stopped). */
export const DELIVERY_LEASE_SECONDS = SEND_TIMEOUT_SECONDS + 5;

export type DeliveryOutcome =
	/** Sent now. */
	| 'sent'
	/** Sent before, under the same key: not sent again. */
	| 'sent before'
	/** Another sender holds it right now: try again later. */
	| 'in flight'
	/** Its earlier sender stopped when the relay may have taken it: not sent again, for a person to check. */
	| 'unknown';

/** The Message-ID of a key: the same key always gives the same one. */
export const messageIdFor = (key: string) =>
	`<${createHash('sha256').update(key).digest('hex').slice(0, 40)}@mail.tenderloom>`;

/**
 * Sends `mail` once under `key`. `onSent` runs in the transaction that records the delivery as sent (the
 * notice's dispatch time is set there). Throws when the relay refuses or cannot be reached; the delivery
 * is then sent by a later attempt.
 */
export async function deliverOnce(
	key: string,
	mail: OutgoingMail,
	onSent?: (trx: Db, at: Date) => Promise<void>
): Promise<DeliveryOutcome> {
	const messageId = messageIdFor(key);
	const claim = await claimDelivery(
		db(),
		{ key, recipient: mail.to, subject: mail.subject, messageId, sender: senderName() },
		DELIVERY_LEASE_SECONDS
	);
	const recordSent = (at: Date) =>
		db().transaction(async (trx) => {
			await settleDelivery(trx, claim.row.id, { status: 'sent', sent_at: at, last_error: null });
			await onSent?.(trx, at);
		});
	if (claim.state === 'sent') return 'sent before';
	if (claim.state === 'unknown') return 'unknown';
	if (claim.state === 'in_flight') return 'in flight';
	if (claim.state === 'ambiguous') {
		const taken = await relayHasMessage(messageId);
		if (taken === true) {
			// It went out when the earlier sender held it: that moment counts as its dispatch.
			await recordSent(claim.previousClaim);
			return 'sent before';
		}
		if (taken === undefined) {
			await settleDelivery(db(), claim.row.id, {
				status: 'unknown',
				last_error: 'the sender stopped while the relay may have accepted the mail; not sent again'
			});
			console.error(
				JSON.stringify({
					level: 'error',
					source: 'mail',
					message: 'a mail may or may not have gone out (its sender stopped); not sent again: check by hand',
					key,
					recipient: mail.to,
					messageId
				})
			);
			return 'unknown';
		}
		// The relay has no such message: the earlier sender stopped before the relay took it.
	}
	try {
		await sendMail({ ...mail, messageId });
	} catch (error) {
		const message = (error as Error).message;
		if (refusedBeforeData(error))
			await settleDelivery(db(), claim.row.id, { status: 'failed', last_error: message });
		// Perhaps accepted: settled by the next attempt, as a stopped sender's would be.
		else await releaseAmbiguousDelivery(db(), claim.row.id, DELIVERY_LEASE_SECONDS, message);
		throw error;
	}
	await recordSent(now());
	return 'sent';
}
