import { z } from 'zod';

export const emailAddress = z
	.email('Enter an e-mail address such as name@example.org.')
	.max(254, 'That e-mail address is too long.');

/** A same-site path to return to after sign-in; anything else falls back to the home page. */
const returnPath = z
	.string()
	.default('/')
	.transform((p) => (p.startsWith('/') && !p.startsWith('//') ? p : '/'));

export const passwordSignInSchema = z.object({
	providerId: z.literal('credentials'),
	email: emailAddress,
	password: z.string().min(1, 'Enter your password.').max(200, 'That password is too long.'),
	redirectTo: returnPath
});

export const linkSignInSchema = z.object({
	providerId: z.literal('nodemailer'),
	email: emailAddress,
	redirectTo: returnPath
});
