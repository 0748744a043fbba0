// The opening of a round of bids, recorded once its deadline has passed: by the deadline job (the event's
// close job, scheduled again for the round's deadline) or the first read after it, whichever comes first.
// The seal itself does not wait for this record: visible_bid_revisions compares the round's deadline.
import { now } from '../clock';
import {
	hasDueRound,
	lockDueRounds,
	markRoundOpened,
	roundBidCounts,
	roundUploadCommitments
} from '../db/rounds';
import type { Db } from '../db/knex';
import { COMMITMENT_SCHEME } from '../storage/sealed-files';
import { appendTrail } from '../trail';

/** Records the opening of every round of the event past its deadline; idempotent (rows locked). */
export async function openDueRounds(trx: Db, eventId: string, by: string): Promise<number> {
	const at = now();
	if (!(await hasDueRound(trx, eventId, at))) return 0;
	const due = await lockDueRounds(trx, eventId, at);
	for (const round of due) {
		const counts = await roundBidCounts(trx, eventId, round.number);
		await markRoundOpened(trx, round.id, at);
		await appendTrail(trx, {
			eventId,
			actor: 'system',
			action: `round ${round.number} bids opened`,
			detail: { round: round.number, at: at.toISOString(), by, ...counts },
			at
		});
		await appendTrail(trx, {
			eventId,
			actor: 'system',
			action: 'commitments revealed',
			detail: {
				scheme: COMMITMENT_SCHEME,
				round: round.number,
				uploads: (await roundUploadCommitments(trx, eventId, round)).map((u) => ({
					upload: u.id,
					commitment: u.commitment,
					salt: u.commitment_salt
				}))
			},
			at
		});
	}
	return due.length;
}
