import { json, type RequestEvent } from '@sveltejs/kit';
import { requireUser } from './auth/guard';
import type { SessionUser } from './auth/session-user';
import { jsonError } from './http';
import { RuleViolation } from './services/errors';

/** An API handler for a signed-in user: a RuleViolation becomes a JSON error with its status. */
export function api(work: (user: SessionUser, event: RequestEvent) => Promise<Response | unknown>) {
	return async (event: RequestEvent): Promise<Response> => {
		const user = requireUser(event);
		try {
			const result = await work(user, event);
			return result instanceof Response ? result : json(result);
		} catch (error) {
			if (error instanceof RuleViolation)
				return jsonError(
					error.status,
					error.message,
					{ path: event.url.pathname, userId: user.id },
					error.field ? { field: error.field } : {}
				);
			throw error;
		}
	};
}
