import { error, json } from '@sveltejs/kit';
import { randomUUID } from 'node:crypto';

export const newErrorId = () => randomUUID().slice(0, 8);

/** Logs an expected failure under a fresh id and throws it as SvelteKit's error(status). */
export function httpError(status: number, message: string, context: Record<string, unknown> = {}): never {
	const errorId = newErrorId();
	console.warn(JSON.stringify({ level: 'warn', errorId, status, message, ...context }));
	error(status, { message, errorId });
}

/**
 * For refusals thrown from hooks: SvelteKit renders those with the static src/error.html, which shows
 * only the message, so the id goes into the message as well.
 */
export function hookError(status: number, message: string, context: Record<string, unknown> = {}): never {
	const errorId = newErrorId();
	console.warn(JSON.stringify({ level: 'warn', errorId, status, message, ...context }));
	error(status, { message: `${message} Error id: ${errorId}.`, errorId });
}

/** The same, as a JSON response, for hooks and API routes that answer without throwing. */
export function jsonError(
	status: number,
	message: string,
	context: Record<string, unknown> = {},
	body: { field?: string } = {}
): Response {
	const errorId = newErrorId();
	console.warn(JSON.stringify({ level: 'warn', errorId, status, message, ...context }));
	return json({ message, errorId, ...body }, { status });
}

/**
 * The policy of kit.csp in svelte.config.js without SvelteKit's nonces, for answers SvelteKit does not
 * render as a page (JSON, files, Auth.js's answers, the static error page of a refusal in a hook).
 * A unit test keeps the two the same.
 */
export const cspDirectives: Record<string, string[]> = {
	'default-src': ["'self'"],
	'script-src': ["'self'"],
	'style-src': ["'self'", "'unsafe-inline'"],
	'img-src': ["'self'", 'data:'],
	'font-src': ["'self'"],
	'connect-src': ["'self'"],
	'form-action': ["'self'"],
	'frame-ancestors': ["'none'"],
	'base-uri': ["'self'"],
	'object-src': ["'none'"]
};

export const fallbackCsp = Object.entries(cspDirectives)
	.map(([name, values]) => `${name} ${values.join(' ')}`)
	.join('; ');

/** The headers every answer carries; `https` adds HSTS, which a plain-http origin must not send. */
export function securityHeaders(https: boolean): Record<string, string> {
	return {
		'x-frame-options': 'DENY',
		'x-content-type-options': 'nosniff',
		'referrer-policy': 'strict-origin-when-cross-origin',
		'permissions-policy': 'camera=(), microphone=(), geolocation=(), payment=(), usb=()',
		'cross-origin-opener-policy': 'same-origin',
		// Pages and API answers carry prices and personal data: no cache, shared or private, keeps them.
		'cache-control': 'no-store',
		...(https ? { 'strict-transport-security': 'max-age=31536000; includeSubDomains' } : {})
	};
}
