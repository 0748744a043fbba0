// Limits on what one supplier organisation may upload to one event, checked before a file is stored or
// read: a number of uploads per window (counted in PostgreSQL, so every web process counts the same
// uploads) and a quota of stored bytes. Both are settings, so a deployment (or the test stack) can
// move them: UPLOAD_LIMIT_PER_SUPPLIER uploads per UPLOAD_LIMIT_WINDOW_SECONDS, UPLOAD_QUOTA_MB.
import { RateLimiterPostgres, RateLimiterRes } from 'rate-limiter-flexible';
import { describeWait } from '../auth/rate-limit';
import { storedUploadBytes } from '../db/bids';
import { db, type Db } from '../db/knex';

const positive = (value: string | undefined, fallback: number) =>
	Number.isFinite(Number(value)) && Number(value) > 0 ? Number(value) : fallback;

export const SUPPLIER_UPLOAD_LIMITS = {
	uploads: positive(process.env.UPLOAD_LIMIT_PER_SUPPLIER, 20),
	windowSeconds: positive(process.env.UPLOAD_LIMIT_WINDOW_SECONDS, 10 * 60),
	quotaBytes: positive(process.env.UPLOAD_QUOTA_MB, 100) * 1024 * 1024
};

/**
 * An upload refused by a limit: 429 (try again later, after `retryAfterSeconds`) or 413 (quota).
 * `onTrail`: whether the refusal goes on the event's trail. Every quota refusal does; of the rate limit's,
 * only the first in a window, so a client that keeps trying cannot fill the trail.
 */
export class UploadLimitReached extends Error {
	constructor(
		message: string,
		readonly status: 413 | 429,
		readonly retryAfterSeconds: number | null = null,
		readonly onTrail = true
	) {
		super(message);
		this.name = 'UploadLimitReached';
	}

	/** What the trail says of the refusal (never the file's size, which would hint at the bid). */
	get reason(): string {
		return this.status === 429
			? `more than ${SUPPLIER_UPLOAD_LIMITS.uploads} uploads within ${describeWait(SUPPLIER_UPLOAD_LIMITS.windowSeconds)}`
			: 'the storage quota for its uploads to this event was reached';
	}
}

let limiter: RateLimiterPostgres | undefined;

// The throttle table of auth/rate-limit.ts is a plain key/points/expiry store; a prefix keeps these
// keys apart from the sign-in ones.
function uploadLimiter(): RateLimiterPostgres {
	limiter ??= new RateLimiterPostgres({
		storeClient: db(),
		storeType: 'knex',
		tableName: 'sign_in_limits',
		tableCreated: true,
		clearExpiredByTimeout: false,
		keyPrefix: 'uploadsPerSupplierEvent',
		points: SUPPLIER_UPLOAD_LIMITS.uploads,
		duration: SUPPLIER_UPLOAD_LIMITS.windowSeconds
	});
	return limiter;
}

const size = (n: number) =>
	n < 1024 * 1024 ? `${Math.ceil(n / 1024)} KB` : `${(n / 1024 / 1024).toFixed(1)} MB`;

/** Counts one upload of the organisation to the event; throws once the window's uploads are used up. */
export async function countSupplierUpload(eventId: string, supplierOrganisationId: string): Promise<void> {
	try {
		await uploadLimiter().consume(`${eventId}:${supplierOrganisationId}`);
	} catch (rejection) {
		if (!(rejection instanceof RateLimiterRes)) throw rejection;
		const seconds = Math.max(1, Math.ceil(rejection.msBeforeNext / 1000));
		throw new UploadLimitReached(
			`Your organisation has uploaded ${SUPPLIER_UPLOAD_LIMITS.uploads} files to this event within ${describeWait(SUPPLIER_UPLOAD_LIMITS.windowSeconds)}, the most allowed. Try again in ${describeWait(seconds)}. This file was not stored; your current bid is unchanged.`,
			429,
			seconds,
			// consumedPoints counts this attempt: one over the limit is the window's first refusal.
			rejection.consumedPoints === SUPPLIER_UPLOAD_LIMITS.uploads + 1
		);
	}
}

/**
 * Throws when storing `bytes` more would take the organisation's uploads to the event over the quota.
 * Counted in the caller's transaction, which holds db/bids.ts lockSupplierBid and records the upload,
 * so two uploads at once cannot both fit into the room that is left for one.
 */
export async function checkUploadQuota(
	trx: Db,
	eventId: string,
	supplierOrganisationId: string,
	bytes: number
): Promise<void> {
	const stored = await storedUploadBytes(trx, eventId, supplierOrganisationId);
	if (stored + bytes <= SUPPLIER_UPLOAD_LIMITS.quotaBytes) return;
	throw new UploadLimitReached(
		`Your organisation's uploads to this event take ${size(stored)} of the ${size(SUPPLIER_UPLOAD_LIMITS.quotaBytes)} allowed; this file (${size(bytes)}) would go over it. It was not stored; your current bid is unchanged. You can still enter prices on screen, or ask the buyer for help.`,
		413
	);
}
