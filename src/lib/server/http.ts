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
export function jsonError(status: number, message: string, context: Record<string, unknown> = {}): Response {
	const errorId = newErrorId();
	console.warn(JSON.stringify({ level: 'warn', errorId, status, message, ...context }));
	return json({ message, errorId }, { status });
}
