import { AsyncLocalStorage } from 'node:async_hooks';
import { isHttpError, isRedirect, redirect, type Handle, type HandleServerError } from '@sveltejs/kit';
import { building } from '$app/environment';
import { sequence } from '@sveltejs/kit/hooks';
import { authHandle, closeAuthPool, SessionCheckUnavailable, sessionUser } from '$lib/server/auth';
import { closeDb, isDatabaseUnavailable } from '$lib/server/db/knex';
import { isPublicPath, isSignOut, rolesFor } from '$lib/server/auth/guard';
import { countSignInRequest } from '$lib/server/auth/rate-limit';
import { config, publicOrigin } from '$lib/server/config';
import { Admission } from '$lib/server/admission';
import { inReadScope } from '$lib/server/services/events';
import { fallbackCsp, hookError, jsonError, newErrorId, securityHeaders } from '$lib/server/http';
import errorPage from './error.html?raw';
import { stopJobs } from '$lib/server/jobs';
import { startWorkers } from '$lib/server/jobs/workers';
import type { ServerInit } from '@sveltejs/kit';

const READS = new Set(['GET', 'HEAD', 'OPTIONS']);

const log = (level: 'info' | 'warn' | 'error', message: string, more: Record<string, unknown> = {}) =>
	console[level](JSON.stringify({ level, source: 'web', message, pid: process.pid, ...more }));

// adapter-node stops taking requests on SIGINT and SIGTERM, lets the ones in flight finish (for up to
// SHUTDOWN_TIMEOUT seconds), then emits this: stop taking jobs, close the pools, and end.
process.once('sveltekit:shutdown', (reason: string) => {
	log('info', 'stopping', { reason });
	void stopJobs()
		.catch((cause: unknown) => log('warn', `stopping the job queue: ${(cause as Error).message}`))
		.then(() => Promise.all([closeDb(), closeAuthPool()]))
		.catch((cause: unknown) => log('warn', `closing the database pools: ${(cause as Error).message}`))
		.finally(() => {
			log('info', 'stopped');
			process.exit(0);
		});
});

// A promise nobody waits for that fails (a dropped database connection inside a library, say) is logged;
// by default Node would end the whole web server for it.
process.on('unhandledRejection', (reason) =>
	log('error', `unhandled rejection: ${reason instanceof Error ? reason.message : String(reason)}`, {
		databaseUnavailable: isDatabaseUnavailable(reason)
	})
);

// Started by the project's supervisor (docker-free-fakes/supervisor.ts): stdin is its lifeline, so the
// server stops as on SIGTERM when the supervisor is gone.
if (process.env.EXIT_WITH_PARENT === '1' && !building) {
	process.stdin.on('close', () => process.kill(process.pid, 'SIGTERM'));
	process.stdin.resume();
}

/** Web processes take queued work too, unless RUN_WORKERS=false (then another process must run the workers). */
export const init: ServerInit = async () => {
	if (building) return;
	// Reads and checks the settings now, so a server with the local fakes in production never starts.
	config();
	if (process.env.RUN_WORKERS !== 'false') await startWorkers();
};

const escapeHtml = (text: string) => text.replace(/[&<>"']/g, (c) => `&#${c.charCodeAt(0)};`);

/** What SvelteKit answers for an error or redirect thrown in a hook, as a Response we can add headers to. */
function thrownAnswer(thrown: unknown, accept: string): Response | null {
	if (isRedirect(thrown))
		return new Response(null, { status: thrown.status, headers: { location: thrown.location } });
	if (!isHttpError(thrown)) return null;
	if (accept.includes('application/json') && !accept.includes('text/html'))
		return Response.json(thrown.body, { status: thrown.status });
	const html = errorPage
		.replaceAll('%sveltekit.status%', String(thrown.status))
		.replace('%sveltekit.error.message%', escapeHtml(thrown.body.message));
	return new Response(html, {
		status: thrown.status,
		headers: { 'content-type': 'text/html; charset=utf-8' }
	});
}

/** Set by handleError when a request failed because the database did not answer. */
const requestFailure = new AsyncLocalStorage<{ databaseUnavailable: boolean }>();

const DATABASE_UNAVAILABLE = 'Tenderloom cannot reach its database; try again in a minute.';

/**
 * Security headers on every answer; pages keep the CSP with nonces that kit.csp gave them. A request that
 * failed because the database is unreachable is answered 503 (with Retry-After), not 500.
 */
const secureHeaders: Handle = async ({ event, resolve }) => {
	const failure = { databaseUnavailable: false };
	let response: Response;
	try {
		response = await requestFailure.run(failure, () => resolve(event));
	} catch (thrown) {
		const answer = thrownAnswer(thrown, event.request.headers.get('accept') ?? '');
		if (!answer) throw thrown;
		response = answer;
	}
	if (failure.databaseUnavailable && response.status === 500) {
		response = new Response(response.body, { status: 503, headers: response.headers });
	}
	if (response.status === 503) response = withHeader(response, 'retry-after', '30');
	const headers = {
		...securityHeaders(publicOrigin().startsWith('https:')),
		...(response.headers.has('content-security-policy') ? {} : { 'content-security-policy': fallbackCsp })
	};
	try {
		for (const [name, value] of Object.entries(headers)) response.headers.set(name, value);
		return response;
	} catch {
		// Response.redirect() and fetched responses have immutable headers.
		const copy = new Response(response.body, response);
		for (const [name, value] of Object.entries(headers)) copy.headers.set(name, value);
		return copy;
	}
};

let admission: Admission | undefined;

/**
 * Page and API reads are served a few at a time per process, in arrival order (admission.ts); a read that
 * finds the queue full is answered 503 with Retry-After. Writes (forms, uploads with their own limits),
 * SvelteKit's own sub-requests (which run inside an admitted request) and the health check go straight in.
 */
const admitReads: Handle = async ({ event, resolve }) => {
	if (!READS.has(event.request.method) || event.isSubRequest || event.url.pathname === '/healthz')
		return resolve(event);
	admission ??= new Admission(config().READS_IN_FLIGHT, config().READS_WAITING);
	const leave = await admission.enter();
	if (!leave) {
		const message = 'Tenderloom is busier than it can answer just now; try again in a minute.';
		const context = { path: event.url.pathname, cause: 'the queue of reads is full' };
		if (event.url.pathname.startsWith('/api/')) return jsonError(503, message, context);
		hookError(503, message, context);
	}
	try {
		return await inReadScope(() => resolve(event));
	} finally {
		leave();
	}
};

/**
 * Refuses every request that may change something unless it comes from our own pages: its Origin must be
 * the configured origin. Browsers send Origin on every such request, so one without it is refused as well,
 * unless Sec-Fetch-Site vouches for it; API clients and scripts send `Origin: <ORIGIN>`. SvelteKit's own
 * check covers form content types only: a bodiless or JSON POST from another site got through.
 */
const sameOriginWrites: Handle = async ({ event, resolve }) => {
	if (READS.has(event.request.method)) return resolve(event);
	const origin = event.request.headers.get('origin');
	const fetchSite = event.request.headers.get('sec-fetch-site');
	const allowed = origin === null ? fetchSite === 'same-origin' : origin === publicOrigin();
	if (allowed) return resolve(event);
	const { pathname } = event.url;
	const message = 'This request came from another site and was refused.';
	const context = { path: pathname, method: event.request.method, origin, fetchSite };
	if (pathname.startsWith('/api/')) return jsonError(403, message, context);
	hookError(403, message, context);
};

const isSignInAttempt = (method: string, path: string) =>
	method === 'POST' &&
	(path === '/signin' || path.startsWith('/auth/callback/') || path.startsWith('/auth/signin/'));

/** A ceiling on sign-in requests per client address, before Auth.js sees them. */
const throttleSignIn: Handle = async ({ event, resolve }) => {
	if (isSignInAttempt(event.request.method, event.url.pathname)) {
		const throttle = await countSignInRequest(event.getClientAddress());
		if (throttle.blocked) redirect(303, `/signin?error=TooManyAttempts&wait=${throttle.retryAfterSeconds}`);
	}
	return resolve(event);
};

/**
 * The signed-in user, re-read from the database. When the database does not answer, the request is
 * answered 503 and the session cookie stays: an outage is not a sign-out.
 */
const loadUser: Handle = async ({ event, resolve }) => {
	try {
		event.locals.user = await sessionUser(event);
	} catch (thrown) {
		if (!(thrown instanceof SessionCheckUnavailable)) throw thrown;
		const context = { path: event.url.pathname, cause: 'session check: the database is unavailable' };
		if (event.url.pathname.startsWith('/api/')) return jsonError(503, DATABASE_UNAVAILABLE, context);
		hookError(503, DATABASE_UNAVAILABLE, context);
	}
	return resolve(event);
};

/** Guards whole route groups; every load, action and API route checks again with requireRole. */
const guard: Handle = async ({ event, resolve }) => {
	const { pathname, search } = event.url;
	const user = event.locals.user;
	const isApi = pathname.startsWith('/api/');
	const deny = (status: number, message: string) =>
		isApi
			? jsonError(status, message, { path: pathname, userId: user?.id })
			: hookError(status, message, { path: pathname, userId: user?.id });

	if (user?.role === 'auditor' && !READS.has(event.request.method) && !isSignOut(pathname)) {
		return deny(403, 'Auditors can read but not change anything.');
	}
	if (isPublicPath(pathname)) return resolve(event);
	if (!user) {
		if (isApi) return deny(401, 'Sign in to continue.');
		redirect(303, `/signin?callbackUrl=${encodeURIComponent(pathname + search)}`);
	}
	const roles = rolesFor(pathname);
	if (roles && !roles.includes(user.role)) return deny(403, 'Your role does not give access to this page.');
	return resolve(event);
};

export const handle = sequence(
	secureHeaders,
	admitReads,
	sameOriginWrites,
	throttleSignIn,
	authHandle,
	loadUser,
	guard
);

export const handleError: HandleServerError = ({ error, event, status, message }) => {
	const errorId = newErrorId();
	if (isDatabaseUnavailable(error)) {
		const failure = requestFailure.getStore();
		if (failure) failure.databaseUnavailable = true;
		console.warn(
			JSON.stringify({
				level: 'warn',
				errorId,
				status: 503,
				path: event.url.pathname,
				summary: 'the database is unavailable',
				message: error instanceof Error ? error.message : String(error)
			})
		);
		return { message: DATABASE_UNAVAILABLE, errorId };
	}
	const cause =
		error instanceof Error ? { message: error.message, stack: error.stack } : { message: String(error) };
	console.error(
		JSON.stringify({
			level: status >= 500 ? 'error' : 'warn',
			errorId,
			status,
			path: event.url.pathname,
			summary: message,
			...cause
		})
	);
	return {
		message:
			status === 404
				? 'There is no page at this address.'
				: 'Something went wrong on our side. Nothing you sent was lost.',
		errorId
	};
};

function withHeader(response: Response, name: string, value: string): Response {
	try {
		response.headers.set(name, value);
		return response;
	} catch {
		// Response.redirect() and fetched responses have immutable headers.
		const copy = new Response(response.body, response);
		copy.headers.set(name, value);
		return copy;
	}
}
