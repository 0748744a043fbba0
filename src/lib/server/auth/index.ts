// Sign-in for Tenderloom, the one module that knows Auth.js (so it can be swapped): e-mail links for
// everyone, passwords for staff, JWT sessions whose user is re-read from the database on every request.
import PostgresAdapter from '@auth/pg-adapter';
import { AuthError, CredentialsSignin, SvelteKitAuth, type SvelteKitAuthConfig } from '@auth/sveltekit';
import { redirect, type RequestEvent } from '@sveltejs/kit';
import Credentials from '@auth/sveltekit/providers/credentials';
import Nodemailer from '@auth/sveltekit/providers/nodemailer';
import pg from 'pg';
import { z } from 'zod';
import { isStaff } from '$lib/roles';
import { config } from '../config';
import { db } from '../db/knex';
import { findUserByEmail, findUserById } from '../db/users';
import { sendMail } from '../mail';
import { signInLinkMail } from '../mail/templates';
import { verifyPassword } from './passwords';
import {
	clearPasswordFailures,
	countPasswordFailure,
	countSignInLink,
	passwordSignInBlocked
} from './rate-limit';
import type { SessionUser } from './session-user';

export const SIGN_IN_LINK_MINUTES = 15;
export const SESSION_HOURS = 8;

declare module '@auth/core/jwt' {
	interface JWT {
		sessionUser?: SessionUser;
	}
}

/** The code Auth.js puts in the sign-in page's URL; it names the wait, never the reason a password failed. */
class SignInThrottled extends CredentialsSignin {
	constructor(retryAfterSeconds: number) {
		super();
		this.code = `wait-${retryAfterSeconds}`;
	}
}

const credentialsSchema = z.object({ email: z.email().max(254), password: z.string().min(1).max(200) });

async function authorizePassword(credentials: Partial<Record<string, unknown>>) {
	const parsed = credentialsSchema.safeParse(credentials);
	if (!parsed.success) return null;
	const email = parsed.data.email.toLowerCase();
	const throttle = await passwordSignInBlocked(email);
	if (throttle.blocked) throw new SignInThrottled(throttle.retryAfterSeconds);
	const user = await findUserByEmail(db(), email);
	const passwordOk = await verifyPassword(parsed.data.password, user?.password_hash);
	// One answer for every cause (no such account, supplier, deactivated, wrong password): no enumeration.
	if (!user || !passwordOk || user.deactivated_at || !isStaff(user.role)) {
		const after = await countPasswordFailure(email);
		if (after.blocked) throw new SignInThrottled(after.retryAfterSeconds);
		return null;
	}
	await clearPasswordFailures(email);
	return { id: String(user.id), email: user.email, name: user.name };
}

let pool: pg.Pool | undefined;

function authConfig(): SvelteKitAuthConfig {
	const settings = config();
	pool ??= new pg.Pool({ connectionString: settings.DATABASE_URL, max: 5 });
	return {
		adapter: PostgresAdapter(pool),
		secret: settings.AUTH_SECRET,
		trustHost: true,
		session: { strategy: 'jwt', maxAge: SESSION_HOURS * 3600 },
		pages: { signIn: '/signin', error: '/signin/error', verifyRequest: '/signin/check-email' },
		logger: {
			error: (error) =>
				console.error(
					JSON.stringify({ level: 'error', source: 'auth', name: error.name, message: error.message })
				),
			warn: (code) => console.warn(JSON.stringify({ level: 'warn', source: 'auth', code }))
		},
		providers: [
			Nodemailer({
				server: settings.SMTP_URL,
				from: settings.MAIL_FROM,
				maxAge: SIGN_IN_LINK_MINUTES * 60,
				sendVerificationRequest: ({ identifier, url, expires }) =>
					sendMail(signInLinkMail(identifier, url, expires))
			}),
			Credentials({
				credentials: {
					email: { label: 'E-mail', type: 'email' },
					password: { label: 'Password', type: 'password' }
				},
				authorize: authorizePassword
			})
		],
		callbacks: {
			async signIn({ user, account, email }) {
				if (account?.provider !== 'nodemailer') return true;
				const address = (user.email ?? '').toLowerCase();
				const found = await findUserByEmail(db(), address);
				if (email?.verificationRequest) {
					const throttle = await countSignInLink(address);
					if (throttle.blocked) return `/signin?error=TooManyAttempts&wait=${throttle.retryAfterSeconds}`;
					// Unknown or deactivated: show the same "check your e-mail" page but send nothing.
					if (!found || found.deactivated_at) return '/signin/check-email';
					return true;
				}
				return Boolean(found && !found.deactivated_at);
			},
			async jwt({ token, user }) {
				const id = Number(user?.id ?? token.sub);
				const row = Number.isInteger(id) ? await findUserById(db(), id) : undefined;
				// Re-read on every request: a deactivated user loses the session at once, a new role applies at once.
				if (!row || row.deactivated_at) return null;
				const sessionUser: SessionUser = {
					id: row.id,
					name: row.name ?? row.email,
					email: row.email,
					role: row.role,
					organisationId: row.organisation_id,
					organisationName: row.organisation_name
				};
				return { sub: String(row.id), iat: token.iat, exp: token.exp, jti: token.jti, sessionUser };
			},
			session({ session, token }) {
				// An explicit object: the default would carry more of the user row to the browser.
				return { expires: session.expires, user: token.sessionUser } as never;
			}
		}
	};
}

let cachedConfig: SvelteKitAuthConfig | undefined;

export async function closeAuthPool(): Promise<void> {
	await pool?.end();
	pool = undefined;
	cachedConfig = undefined;
}

const auth = SvelteKitAuth(async () => {
	cachedConfig ??= authConfig();
	return cachedConfig;
});

export const { handle: authHandle, signOut } = auth;

/**
 * Hands a sign-in form's body to Auth.js. Called from a form action, Auth.js throws its errors instead
 * of redirecting; send the person back to the sign-in page with the codes its own endpoint would use.
 */
export async function signInFromForm(event: RequestEvent): Promise<void> {
	try {
		await auth.signIn(event);
	} catch (error) {
		if (!(error instanceof AuthError)) throw error;
		const params = new URLSearchParams({ error: error.type ?? 'Default' });
		if (error instanceof CredentialsSignin) params.set('code', error.code);
		redirect(303, `/signin?${params}`);
	}
}
