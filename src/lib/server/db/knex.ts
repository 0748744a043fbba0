import { createHash } from 'node:crypto';
import knex, { type Knex } from 'knex';
import PgClient from 'knex/lib/dialects/postgres/index.js';
import { config } from '../config';

export type Db = Knex | Knex.Transaction;

/** How many statements one connection keeps prepared; later new ones run unprepared. */
export const PREPARED_PER_CONNECTION = 200;

/** A pg connection as Knex hands it to its client; `__knex__disposed` is how Knex marks one to drop. */
interface PooledConnection {
	__knex__disposed?: unknown;
}

interface QueryObject {
	sql: string;
	bindings?: readonly unknown[];
	options?: Record<string, unknown>;
}

/**
 * Knex's PostgreSQL client, preparing each statement once per connection. Knex sends every statement
 * unnamed, so PostgreSQL parses and plans it again each time: on a page under load that was half of the
 * database's time (pg_stat_statements; DEVELOPERS.md, "Benchmarks of pages and uploads"). pg prepares a
 * statement given a name once per connection and then only binds and executes it; PostgreSQL keeps its
 * plan when a generic one is no worse (plan_cache_mode auto).
 *
 * The name is a hash of the text, so one name never stands for two texts (pg refuses that). Only
 * statements with parameters are named: one without can be several commands (a migration's raw SQL),
 * which a prepared statement cannot hold. A connection names at most `preparedPerConnection` texts
 * (lists of varying length make new texts); the rest run as before.
 *
 * A prepared `select *` fails with "cached plan must not change result type" (SQLSTATE 0A000) after a
 * migration changed the table's columns under a running server; the connection is then dropped when
 * released, so the next statement prepares afresh on a new one.
 */
export function namedStatementsClient(preparedPerConnection = PREPARED_PER_CONNECTION): typeof Knex.Client {
	const prepared = new WeakMap<PooledConnection, Set<string>>();
	return class NamedStatementsClient extends PgClient {
		override query(connection: PooledConnection, param: string | QueryObject) {
			const query: QueryObject = typeof param === 'string' ? { sql: param } : param;
			if (query.bindings?.length) {
				let names = prepared.get(connection);
				if (!names) prepared.set(connection, (names = new Set()));
				const name = `k${createHash('sha1').update(query.sql).digest('base64url')}`;
				if (names.has(name) || names.size < preparedPerConnection) {
					names.add(name);
					query.options = { ...query.options, name };
				}
			}
			const answer: Promise<unknown> = super.query(connection, query);
			return answer.catch((error: unknown) => {
				if ((error as { code?: unknown }).code === '0A000' && query.options?.name)
					connection.__knex__disposed = error;
				throw error;
			});
		}
	};
}

/** A pool of at most `max` connections to `url` whose statements are prepared once per connection. */
export function pool(url: string, { max = 10, preparedPerConnection = PREPARED_PER_CONNECTION } = {}): Knex {
	return knex({
		client: namedStatementsClient(preparedPerConnection),
		connection: url,
		pool: { min: 0, max }
	});
}

let instance: Knex | undefined;

/**
 * The process's connection pool, made on first use. A connection that PostgreSQL drops (a restart, an
 * idle timeout) is marked by Knex's own error listener and replaced at its next use; when the server is
 * down, queries fail at once (Knex passes the connect error on) instead of waiting for a free connection.
 */
export function db(): Knex {
	instance ??= pool(config().DATABASE_URL);
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
