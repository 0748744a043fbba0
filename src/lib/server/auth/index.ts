// Sign-in for Tenderloom, the one module that knows Auth.js (so it can be swapped): e-mail links for
// everyone, passwords for staff, JWT sessions whose user is re-read from the database on every request
// and whose server-side record (user_sessions) must still be open.
import { AsyncLocalStorage } from 'node:async_hooks';
import PostgresAdapter from '@auth/pg-adapter';
import type { JWT } from '@auth/core/jwt';
import { AuthError, CredentialsSignin, SvelteKitAuth, type SvelteKitAuthConfig } from '@auth/sveltekit';
import { json, redirect, type Cookies, type Handle, type RequestEvent } from '@sveltejs/kit';
import Credentials from '@auth/sveltekit/providers/credentials';
import Nodemailer from '@auth/sveltekit/providers/nodemailer';
import pg from 'pg';
import { z } from 'zod';
import { isStaff } from '$lib/roles';
import { emailAddress } from '$lib/schemas/sign-in';
import { config, publicOrigin } from '../config';
import { db, isDatabaseUnavailable, logPoolError } from '../db/knex';
import { findOpenSessionUser, insertSession, touchSession } from '../db/sessions';
import { findUserById, findUserByEmail, type UserWithOrganisation } from '../db/users';
import { sessionCookiePolicy } from './cookies';
import { verifyPassword } from './passwords';
import { clearPasswordFailures, countPasswordFailure, passwordSignInBlocked } from './rate-limit';
import type { SessionUser } from './session-user';
import { endUserSessions } from './sessions';
import { sessionTokenCodec, type TokenSeen } from './session-token';
import { requestSignInLink, returnPath, SIGN_IN_LINK_MINUTES } from './sign-in-links';

export const SESSION_HOURS = 8;
const LAST_SEEN_EVERY_MS = 60_000;
const SESSION_ID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/;

declare module '@auth/core/jwt' {
	interface JWT {
		sessionUser?: SessionUser;
		/** The user_sessions row this cookie belongs to. */
		sid?: string;
	}
}

/** What the callbacks may know of the request they run in (Auth.js does not hand it to them). */
interface AuthRequest {
	userAgent: string | null;
	ip: string | null;
	sessionId?: string;
	/** The session could not be checked because the database did not answer (the cookie is kept). */
	databaseUnavailable?: boolean;
	/** The session token the request came with, once read (auth/session-token.ts). */
	token?: TokenSeen;
}
const currentRequest = new AsyncLocalStorage<AuthRequest>();

/** The id of the session the current request was made in, once the hook has read the session. */
export const currentSessionId = (): string | null => currentRequest.getStore()?.sessionId ?? null;

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

const sessionUserOf = (row: UserWithOrganisation): SessionUser => ({
	id: row.id,
	name: row.name ?? row.email,
	email: row.email,
	role: row.role,
	organisationId: row.organisation_id,
	organisationName: row.organisation_name
});

/**
 * The session behind a token, re-read on every request: a deactivated user, an ended session (sign-out,
 * sign out everywhere, a password change elsewhere, a role change) or a token without one is refused.
 */
async function openSessionUser(userId: number, sid: unknown): Promise<UserWithOrganisation | null> {
	if (!Number.isInteger(userId) || typeof sid !== 'string' || !SESSION_ID.test(sid)) return null;
	// One query for both (it was two in parallel, each on a pooled connection, on every request).
	const found = await findOpenSessionUser(db(), sid, userId, SESSION_HOURS);
	if (!found || found.deactivated_at) return null;
	const { session_last_seen: lastSeen, ...row } = found;
	if (Date.now() - lastSeen.getTime() > LAST_SEEN_EVERY_MS) await touchSession(db(), sid);
	return row;
}

/** The session cookie's codec, shared by Auth.js (its endpoints) and sessionUser (every other request). */
const tokens = sessionTokenCodec(() => currentRequest.getStore());

/**
 * A session token's claims checked against the database, as the token to go on with, or null when the
 * session is over. Re-read on every request: a deactivated user loses the session at once, a new role
 * applies at once. When the database does not answer, the token comes back as it is and the request is
 * marked: the cookie must not be cleared (a database down for a minute would sign everyone out), and
 * sessionUser() answers the request with "unavailable".
 */
async function recheckedToken(token: JWT): Promise<JWT | null> {
	const request = currentRequest.getStore();
	let row: UserWithOrganisation | null;
	try {
		row = await openSessionUser(Number(token.sub), token.sid);
	} catch (error) {
		if (!request || !isDatabaseUnavailable(error)) throw error;
		request.databaseUnavailable = true;
		return token;
	}
	if (!row) return null;
	if (request) request.sessionId = token.sid;
	const { iat, exp, jti, sid } = token;
	return { sub: String(row.id), iat, exp, jti, sid, sessionUser: sessionUserOf(row) };
}

let pool: pg.Pool | undefined;

function authConfig(): SvelteKitAuthConfig {
	const settings = config();
	if (!pool) {
		pool = new pg.Pool({ connectionString: settings.DATABASE_URL, max: 5 });
		// An idle connection that PostgreSQL drops (a restart) is an 'error' event: unheard, it ends the process.
		pool.on('error', logPoolError('auth-pool'));
	}
	return {
		adapter: PostgresAdapter(pool),
		secret: settings.AUTH_SECRET,
		// Auth.js builds URLs from the Host and X-Forwarded-* headers of what it is given; it is only ever
		// given requests rebuilt on the configured origin (atPublicOrigin), so those headers are ours.
		trustHost: true,
		useSecureCookies: sessionCookiePolicy(settings.ORIGIN).secure,
		session: { strategy: 'jwt', maxAge: SESSION_HOURS * 3600 },
		jwt: tokens,
		pages: { signIn: '/signin', error: '/signin/error', verifyRequest: '/signin/check-email' },
		logger: {
			error: (error) =>
				console.error(
					JSON.stringify({ level: 'error', source: 'auth', name: error.name, message: error.message })
				),
			warn: (code) => console.warn(JSON.stringify({ level: 'warn', source: 'auth', code }))
		},
		providers: [
			// Only its callback is used (it checks the one-time token); links are sent by requestSignInLink.
			Nodemailer({
				server: settings.SMTP_URL,
				from: settings.MAIL_FROM,
				maxAge: SIGN_IN_LINK_MINUTES * 60,
				sendVerificationRequest: () => {
					throw new Error('Sign-in links are sent by requestSignInLink, never by Auth.js.');
				}
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
				if (email?.verificationRequest) return false;
				const found = await findUserByEmail(db(), (user.email ?? '').toLowerCase());
				return Boolean(found && !found.deactivated_at);
			},
			async jwt({ token, user }) {
				const request = currentRequest.getStore();
				if (user) {
					const row = await findUserById(db(), Number(user.id));
					if (!row || row.deactivated_at) return null;
					const sid = await insertSession(db(), {
						userId: row.id,
						userAgent: request?.userAgent ?? null,
						ip: request?.ip ?? null
					});
					if (request) request.sessionId = sid;
					const { iat, exp, jti } = token;
					return { sub: String(row.id), iat, exp, jti, sid, sessionUser: sessionUserOf(row) };
				}
				return recheckedToken(token);
			},
			session({ session, token }) {
				// An explicit object: the default would carry more of the user row (or the session id) to the browser.
				return { expires: session.expires, user: token.sessionUser } as never;
			}
		},
		events: {
			async signOut(message) {
				const token = 'token' in message ? message.token : null;
				const userId = Number(token?.sub);
				if (!token?.sid || !SESSION_ID.test(token.sid) || !Number.isInteger(userId)) return;
				await endUserSessions(db(), {
					userId,
					reason: 'signed out',
					actorUserId: userId,
					ip: currentRequest.getStore()?.ip,
					only: token.sid
				});
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

/** Cookies set through SvelteKit get the same flags as those Auth.js sets on its own answers. */
function withSessionCookieFlags(cookies: Cookies): Cookies {
	const { secure, httpOnly, sameSite } = sessionCookiePolicy(config().ORIGIN);
	return {
		...cookies,
		set: (name, value, options) => cookies.set(name, value, { ...options, secure, httpOnly, sameSite })
	};
}

const HOST_HEADERS = ['host', 'x-forwarded-host', 'x-forwarded-proto', 'x-forwarded-port', 'forwarded'];

/**
 * The request as Auth.js may see it: on the configured origin whatever the Host and X-Forwarded-*
 * headers say, since Auth.js builds its links and redirects from them. The body goes along only when
 * asked, so the route behind the hook still reads its own.
 */
function atPublicOrigin(event: RequestEvent, body: 'none' | 'request' | URLSearchParams): RequestEvent {
	const url = new URL(event.url.pathname + event.url.search, publicOrigin());
	const headers = new Headers(event.request.headers);
	for (const name of HOST_HEADERS) headers.delete(name);
	headers.set('host', url.host);
	let request: Request;
	if (body === 'none') request = new Request(url, { headers });
	else if (body === 'request') {
		request = new Request(url, {
			method: event.request.method,
			headers,
			body: event.request.body,
			duplex: 'half'
		} as RequestInit);
	} else {
		headers.set('content-type', 'application/x-www-form-urlencoded');
		request = new Request(url, { method: 'POST', headers, body });
	}
	return { ...event, url, request, cookies: withSessionCookieFlags(event.cookies) };
}

function clientAddress(event: RequestEvent): string | null {
	try {
		return event.getClientAddress();
	} catch {
		return null;
	}
}

const linkEndpointSchema = z.object({ email: emailAddress, callbackUrl: z.string().max(2000).nullish() });

/**
 * Auth.js's own e-mail sign-in endpoint, answered as the sign-in page answers: the same redirect for
 * every address, the link sent in the background.
 */
async function linkFromAuthEndpoint(event: RequestEvent): Promise<Response> {
	const form = await event.request.formData().catch(() => new FormData());
	const parsed = linkEndpointSchema.safeParse({
		email: form.get('email'),
		callbackUrl: form.get('callbackUrl')
	});
	let location = `${publicOrigin()}/signin?error=EmailSignin`;
	if (parsed.success) {
		const throttle = await requestSignInLink(parsed.data.email, returnPath(parsed.data.callbackUrl));
		location = throttle.blocked
			? `${publicOrigin()}/signin?error=TooManyAttempts&wait=${throttle.retryAfterSeconds}`
			: `${publicOrigin()}/signin/check-email`;
	}
	if (event.request.headers.has('x-auth-return-redirect')) return json({ url: location });
	return new Response(null, { status: 302, headers: { location } });
}

/** The session could not be checked: the database did not answer. The cookie stays as it was. */
export class SessionCheckUnavailable extends Error {
	constructor() {
		super('Tenderloom cannot reach its database; try again in a minute.');
		this.name = 'SessionCheckUnavailable';
	}
}

/**
 * The signed-in user of this request, or null when there is none (no cookie, an ended session, a
 * deactivated user). Throws SessionCheckUnavailable when the database could not be asked: that is an
 * outage to report, not a sign-out. Call it from a hook after authHandle.
 */
export async function sessionUser(event: RequestEvent): Promise<SessionUser | null> {
	const { sessionCookieName: name, secure, httpOnly, sameSite } = sessionCookiePolicy(config().ORIGIN);
	// Auth.js splits a token over several cookies (name.0, name.1…) only above 4 kB; ours stay well under,
	// so such pieces were not made here: they sign nobody in and are cleared.
	const cookie = { path: '/', secure, httpOnly, sameSite } as const;
	for (const { name: other } of event.cookies.getAll())
		if (other.startsWith(`${name}.`)) event.cookies.delete(other, cookie);
	const raw = event.cookies.get(name);
	if (!raw) return null;
	const secret = config().AUTH_SECRET;
	// What Auth.js's session endpoint does with a JWT session (@auth/core, lib/actions/session.ts), less
	// its Request and Response round trip, which was a tenth of a page's time: read the token, check it
	// (the jwt callback's re-read), clear the cookie when it is bad or over, else send the token on.
	let claims: JWT | null;
	try {
		claims = await tokens.decode({ token: raw, secret, salt: name });
	} catch {
		claims = null;
	}
	const token = claims && (await recheckedToken(claims));
	if (currentRequest.getStore()?.databaseUnavailable) throw new SessionCheckUnavailable();
	if (!token?.sessionUser) {
		event.cookies.delete(name, cookie);
		return null;
	}
	const maxAge = SESSION_HOURS * 3600;
	// Renewed on every answer, as Auth.js does (the same token while it is young: session-token.ts).
	const next = await tokens.encode({ token, secret, salt: name, maxAge });
	event.cookies.set(name, next, { ...cookie, maxAge });
	return token.sessionUser;
}

/**
 * Auth.js's hook, for its endpoints under /auth/ only. Every request's session is read by sessionUser(),
 * without Auth.js (so locals.auth() is not set outside /auth/).
 */
export const authHandle: Handle = ({ event, resolve }) =>
	currentRequest.run(
		{ userAgent: event.request.headers.get('user-agent'), ip: clientAddress(event) },
		async () => {
			const { pathname } = event.url;
			if (event.request.method === 'POST' && pathname === '/auth/signin/nodemailer') {
				return linkFromAuthEndpoint(event);
			}
			// Auth.js's hook builds a Request for every request it sees; outside its endpoints it only
			// offers locals.auth(), which sessionUser() replaces.
			if (!pathname.startsWith('/auth/')) return resolve(event);
			return auth.handle({
				event: atPublicOrigin(event, 'request'),
				resolve: (_, options) => resolve(event, options)
			});
		}
	);

/**
 * Hands a sign-in form's body to Auth.js. Called from a form action, Auth.js throws its errors instead
 * of redirecting; send the person back to the sign-in page with the codes its own endpoint would use.
 */
export async function signInFromForm(event: RequestEvent): Promise<void> {
	try {
		await auth.signIn(atPublicOrigin(event, 'request'));
	} catch (error) {
		if (!(error instanceof AuthError)) throw error;
		const params = new URLSearchParams({ error: error.type ?? 'Default' });
		if (error instanceof CredentialsSignin) params.set('code', error.code);
		redirect(303, `/signin?${params}`);
	}
}

/** Signs out: this session ends for good (a copy of its cookie no longer works) and the cookie is cleared. */
export async function signOut(event: RequestEvent): Promise<void> {
	// The session this request was checked against ends here, not only in Auth.js's signOut event: that
	// runs only when Auth.js can decode the cookies it joins (name, name.0, name.1…), and a stray piece
	// planted beside the session cookie would leave the session open for a copied cookie.
	const user = event.locals.user;
	const sid = currentSessionId();
	if (user && sid) {
		await endUserSessions(db(), {
			userId: user.id,
			reason: 'signed out',
			actorUserId: user.id,
			ip: clientAddress(event),
			only: sid
		});
	}
	await auth.signOut(atPublicOrigin(event, 'request'));
}

/** Ends every session of the signed-in user, this one included, then clears this browser's cookie. */
export async function signOutEverywhere(event: RequestEvent, user: SessionUser): Promise<void> {
	await endUserSessions(db(), {
		userId: user.id,
		reason: 'signed out everywhere',
		actorUserId: user.id,
		ip: clientAddress(event)
	});
	await auth.signOut(atPublicOrigin(event, new URLSearchParams({ redirectTo: '/signin?signedOut=1' })));
}
