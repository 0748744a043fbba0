import { redirect, type Handle, type HandleServerError } from '@sveltejs/kit';
import { building } from '$app/environment';
import { sequence } from '@sveltejs/kit/hooks';
import { authHandle, closeAuthPool } from '$lib/server/auth';
import { closeDb } from '$lib/server/db/knex';
import { isPublicPath, isSignOut, rolesFor } from '$lib/server/auth/guard';
import { countSignInRequest } from '$lib/server/auth/rate-limit';
import type { SessionUser } from '$lib/server/auth/session-user';
import { hookError, jsonError, newErrorId } from '$lib/server/http';
import { stopJobs } from '$lib/server/jobs';
import { startWorkers } from '$lib/server/jobs/workers';
import type { ServerInit } from '@sveltejs/kit';

const READS = new Set(['GET', 'HEAD', 'OPTIONS']);

// adapter-node emits this once the server has stopped taking requests; idle pools would otherwise
// hold the process open for their idle timeout.
process.once('sveltekit:shutdown', () => {
	void stopJobs().finally(() => Promise.all([closeDb(), closeAuthPool()]));
});

/** Web processes take queued work too, unless RUN_WORKERS=false (then another process must run the workers). */
export const init: ServerInit = async () => {
	if (process.env.RUN_WORKERS !== 'false' && !building) await startWorkers();
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

const loadUser: Handle = async ({ event, resolve }) => {
	const session = await event.locals.auth();
	event.locals.user = (session?.user as SessionUser | undefined) ?? null;
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

export const handle = sequence(throttleSignIn, authHandle, loadUser, guard);

export const handleError: HandleServerError = ({ error, event, status, message }) => {
	const errorId = newErrorId();
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
