import { createHash, randomBytes } from 'node:crypto';
import { config, publicOrigin } from '../config';
import { db as pool, type Db } from '../db/knex';
import { findUserByEmail } from '../db/users';
import { jobs, QUEUES } from '../jobs';
import { sendMail } from '../mail';
import { signInLinkMail } from '../mail/templates';
import { countSignInLink, type Throttle } from './rate-limit';

export const SIGN_IN_LINK_MINUTES = 15;

/** A same-site path to return to; anything else (another origin included) becomes the home page. */
export function returnPath(candidate: string | null | undefined): string {
	if (!candidate) return '/';
	let path = candidate;
	if (!candidate.startsWith('/')) {
		try {
			const url = new URL(candidate);
			if (url.origin !== publicOrigin()) return '/';
			path = url.pathname + url.search;
		} catch {
			return '/';
		}
	}
	return path.startsWith('/') && !path.startsWith('//') && !path.startsWith('/\\') ? path : '/';
}

/**
 * A one-time sign-in link of the kind the e-mail provider sends. The token is stored hashed exactly as
 * Auth.js stores its own (sha256 of token + secret), so its callback accepts it once. The link is built
 * on the configured origin only: a request's Host or X-Forwarded-Host never reaches a mailed link.
 */
export async function createSignInLink(
	db: Db,
	input: { email: string; callbackPath: string; validForHours: number }
): Promise<{ url: string; expires: Date }> {
	const origin = publicOrigin();
	const token = randomBytes(32).toString('hex');
	const expires = new Date(Date.now() + input.validForHours * 3600_000);
	const hashed = createHash('sha256').update(`${token}${config().AUTH_SECRET}`).digest('hex');
	await db('verification_token').insert({ identifier: input.email, token: hashed, expires });
	const params = new URLSearchParams({
		callbackUrl: `${origin}${returnPath(input.callbackPath)}`,
		token,
		email: input.email
	});
	return { url: `${origin}/auth/callback/nodemailer?${params}`, expires };
}

export interface SignInLinkJob {
	email: string;
	callbackPath: string;
}

/**
 * Someone asked for a sign-in link. The answer and the work are the same whether or not the address
 * has an active account (the lookup and the sending happen in the background), so neither the page
 * nor its timing tells an account apart from none.
 */
export async function requestSignInLink(email: string, callbackPath: string): Promise<Throttle> {
	const address = email.trim().toLowerCase();
	const throttle = await countSignInLink(address);
	if (throttle.blocked) return throttle;
	const queue = await jobs();
	await queue.send(
		QUEUES.signInLink,
		{ email: address, callbackPath: returnPath(callbackPath) } satisfies SignInLinkJob,
		{
			retryLimit: 5,
			retryDelay: 5,
			retryBackoff: true
		}
	);
	return throttle;
}

/** The queued half: only an active account gets a link; for any other address nothing is sent. */
export async function sendSignInLink(job: SignInLinkJob): Promise<void> {
	const user = await findUserByEmail(pool(), job.email);
	if (!user || user.deactivated_at) return;
	const link = await createSignInLink(pool(), {
		email: user.email,
		callbackPath: job.callbackPath,
		validForHours: SIGN_IN_LINK_MINUTES / 60
	});
	await sendMail(signInLinkMail(user.email, link.url, link.expires));
}
