import { createHash, randomBytes } from 'node:crypto';
import { config } from '../config';
import type { Db } from '../db/knex';

/**
 * A one-time sign-in link of the kind the e-mail provider sends, for invitations. The token is stored
 * hashed exactly as Auth.js stores its own (sha256 of token + secret), so its callback accepts it once.
 */
export async function createSignInLink(
	db: Db,
	input: { email: string; origin: string; callbackPath: string; validForHours: number }
): Promise<{ url: string; expires: Date }> {
	const token = randomBytes(32).toString('hex');
	const expires = new Date(Date.now() + input.validForHours * 3600_000);
	const hashed = createHash('sha256').update(`${token}${config().AUTH_SECRET}`).digest('hex');
	await db('verification_token').insert({ identifier: input.email, token: hashed, expires });
	const params = new URLSearchParams({
		callbackUrl: `${input.origin}${input.callbackPath}`,
		token,
		email: input.email
	});
	return { url: `${input.origin}/auth/callback/nodemailer?${params}`, expires };
}
