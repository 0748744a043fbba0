import knex, { type Knex } from 'knex';
import { config } from '../config';

export type Db = Knex | Knex.Transaction;

let instance: Knex | undefined;

/**
 * The process's connection pool, made on first use. A connection that PostgreSQL drops (a restart, an
 * idle timeout) is marked by Knex's own error listener and replaced at its next use; when the server is
 * down, queries fail at once (Knex passes the connect error on) instead of waiting for a free connection.
 */
export function db(): Knex {
	instance ??= knex({ client: 'pg', connection: config().DATABASE_URL, pool: { min: 0, max: 10 } });
	return instance;
}

export async function closeDb(): Promise<void> {
	await instance?.destroy();
	instance = undefined;
}

/**
 * SQLSTATEs that mean "the server is not there now", not "the query was wrong": class 08 (connection
 * exception), 57P01-57P03 (shut down by the administrator, crash shutdown, cannot connect now), 53300
 * (too many connections).
 */
const UNAVAILABLE_STATES = /^(08...|57P0[123]|53300)$/;
const UNAVAILABLE_CODES = new Set(['ECONNREFUSED', 'ECONNRESET', 'EPIPE', 'ETIMEDOUT', 'EHOSTUNREACH']);
const UNAVAILABLE_MESSAGES = [
	'Connection terminated',
	'Client has encountered a connection error',
	'Timeout acquiring a connection'
];

/**
 * Whether an error means the database cannot be reached now (refused, dropped, shutting down, starting
 * up), as against an answer from it. Callers answer "try again later" rather than "no such thing".
 */
export function isDatabaseUnavailable(error: unknown, depth = 0): boolean {
	if (!error || typeof error !== 'object' || depth > 4) return false;
	const { code, message, name, cause, errors } = error as {
		code?: unknown;
		message?: unknown;
		name?: unknown;
		cause?: unknown;
		errors?: unknown;
	};
	if (typeof code === 'string' && (UNAVAILABLE_STATES.test(code) || UNAVAILABLE_CODES.has(code))) return true;
	if (name === 'KnexTimeoutError') return true;
	if (typeof message === 'string' && UNAVAILABLE_MESSAGES.some((m) => message.includes(m))) return true;
	if (Array.isArray(errors) && errors.some((e) => isDatabaseUnavailable(e, depth + 1))) return true;
	return isDatabaseUnavailable(cause, depth + 1);
}

/** Logs a database error that has nowhere else to go (a pool's idle connection dropped): one JSON line. */
export function logPoolError(source: string) {
	return (error: Error) =>
		console.warn(
			JSON.stringify({
				level: 'warn',
				source,
				message: `database connection lost: ${error.message}`,
				code: (error as { code?: string }).code
			})
		);
}
