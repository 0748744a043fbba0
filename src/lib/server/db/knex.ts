import knex, { type Knex } from 'knex';
import { config } from '../config';

export type Db = Knex | Knex.Transaction;

let instance: Knex | undefined;

/** The process's connection pool, made on first use. */
export function db(): Knex {
	instance ??= knex({ client: 'pg', connection: config().DATABASE_URL, pool: { min: 0, max: 10 } });
	return instance;
}

export async function closeDb(): Promise<void> {
	await instance?.destroy();
	instance = undefined;
}
