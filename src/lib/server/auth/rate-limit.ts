import { RateLimiterPostgres, RateLimiterRes } from 'rate-limiter-flexible';
import { db } from '../db/knex';

// Sign-in throttles kept in PostgreSQL, so every web process behind a proxy counts the same attempts.
// Per account: 5 failed passwords in 15 minutes block that account's password sign-in for the rest of
// the window. Per address: a ceiling on all sign-in requests. Per e-mail address: sign-in links sent.
const limits = {
	passwordFailures: { points: 5, duration: 15 * 60 },
	requestsPerAddress: { points: Number(process.env.SIGN_IN_LIMIT_PER_ADDRESS ?? 60), duration: 10 * 60 },
	linksPerEmail: { points: 5, duration: 15 * 60 }
};

type LimitName = keyof typeof limits;
const limiters = new Map<LimitName, RateLimiterPostgres>();

function limiter(name: LimitName): RateLimiterPostgres {
	let found = limiters.get(name);
	if (!found) {
		found = new RateLimiterPostgres({
			storeClient: db(),
			storeType: 'knex',
			tableName: 'sign_in_limits',
			tableCreated: true,
			clearExpiredByTimeout: false,
			keyPrefix: name,
			...limits[name]
		});
		limiters.set(name, found);
	}
	return found;
}

export type Throttle = { blocked: false } | { blocked: true; retryAfterSeconds: number };

const blockedFor = (res: RateLimiterRes): Throttle => ({
	blocked: true,
	retryAfterSeconds: Math.max(1, Math.ceil(res.msBeforeNext / 1000))
});

/** Counts one attempt; blocked once the limit is used up. */
async function consume(name: LimitName, key: string): Promise<Throttle> {
	try {
		await limiter(name).consume(key);
		return { blocked: false };
	} catch (rejection) {
		if (rejection instanceof RateLimiterRes) return blockedFor(rejection);
		throw rejection;
	}
}

export const countSignInRequest = (address: string) => consume('requestsPerAddress', address);
export const countSignInLink = (email: string) => consume('linksPerEmail', email.toLowerCase());
export const countPasswordFailure = (email: string) => consume('passwordFailures', email.toLowerCase());

/** Whether an account's password sign-in is blocked, without counting an attempt. */
export async function passwordSignInBlocked(email: string): Promise<Throttle> {
	const res = await limiter('passwordFailures').get(email.toLowerCase());
	return res && res.consumedPoints >= limits.passwordFailures.points ? blockedFor(res) : { blocked: false };
}

export async function clearPasswordFailures(email: string): Promise<void> {
	await limiter('passwordFailures').delete(email.toLowerCase());
}

/** "2 minutes", "45 seconds": the wait shown to a person. */
export function describeWait(seconds: number): string {
	if (seconds < 60) return `${seconds} second${seconds === 1 ? '' : 's'}`;
	const minutes = Math.ceil(seconds / 60);
	return `${minutes} minute${minutes === 1 ? '' : 's'}`;
}
