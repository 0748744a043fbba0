import type { RequestEvent } from '@sveltejs/kit';
import type { Role } from '$lib/roles';
import { httpError } from '../http';
import type { SessionUser } from './session-user';

type Event = Pick<RequestEvent, 'locals' | 'url'>;

/** The signed-in user, or a 401. Used in every load, action and API route besides the hook's guard. */
export function requireUser(event: Event): SessionUser {
	const user = event.locals.user;
	if (!user) httpError(401, 'Sign in to continue.', { path: event.url.pathname });
	return user;
}

/** The signed-in user when it holds one of the roles, else 401 or 403. */
export function requireRole(event: Event, ...roles: Role[]): SessionUser {
	const user = requireUser(event);
	if (!roles.includes(user.role)) {
		httpError(403, 'Your role does not give access to this.', {
			path: event.url.pathname,
			userId: user.id,
			role: user.role
		});
	}
	return user;
}

/** Which roles may reach which part of the app; the hook refuses anything else before a route runs. */
export const areas: { prefix: string; roles: readonly Role[] }[] = [
	{ prefix: '/admin', roles: ['admin'] },
	{ prefix: '/buyer', roles: ['buyer'] },
	{ prefix: '/approver', roles: ['approver'] },
	{ prefix: '/supplier', roles: ['supplier'] },
	{ prefix: '/audit', roles: ['auditor'] },
	{ prefix: '/events', roles: ['buyer', 'approver', 'auditor', 'admin'] },
	{ prefix: '/api/organisations', roles: ['admin', 'buyer'] },
	{ prefix: '/api/admin', roles: ['admin'] }
];

/** Reachable without signing in. Everything else needs a session. */
const publicAreas = [
	'/signin',
	'/signout',
	'/auth',
	'/healthz',
	'/dev',
	'/_app',
	'/favicon.svg',
	'/robots.txt'
];

const within = (path: string, prefix: string) => path === prefix || path.startsWith(`${prefix}/`);

export const isPublicPath = (path: string) => path === '/' || publicAreas.some((area) => within(path, area));

export function rolesFor(path: string): readonly Role[] | null {
	return areas.find((a) => within(path, a.prefix))?.roles ?? null;
}

/** Auditors read; the only requests they may send that are not reads are signing out (here or everywhere). */
export function isSignOut(path: string): boolean {
	return path === '/auth/signout' || path === '/signout' || path === '/signout/everywhere';
}
