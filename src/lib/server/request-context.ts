import type { RequestEvent } from '@sveltejs/kit';
import { config } from './config';
import type { RequestContext } from './services/users';

/** Where links in mail point (the configured public origin) and where the request came from. */
export function requestContext(event: Pick<RequestEvent, 'url' | 'getClientAddress'>): RequestContext {
	let ip: string | null;
	try {
		ip = event.getClientAddress();
	} catch {
		ip = null;
	}
	return { origin: config().ORIGIN ?? event.url.origin, ip };
}
