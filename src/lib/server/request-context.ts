import type { RequestEvent } from '@sveltejs/kit';
import { currentSessionId } from './auth';
import { publicOrigin } from './config';
import type { RequestContext } from './services/users';

/**
 * Where links in mail point (the configured public origin, never the request's Host or
 * X-Forwarded-Host), where the request came from and the session it was made in.
 */
export function requestContext(event: Pick<RequestEvent, 'getClientAddress'>): RequestContext {
	let ip: string | null;
	try {
		ip = event.getClientAddress();
	} catch {
		ip = null;
	}
	return { origin: publicOrigin(), ip, sessionId: currentSessionId() };
}
