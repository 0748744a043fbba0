import { fileURLToPath } from 'node:url';
import type { Knex } from 'knex';

// One configuration for migrations, seeds and the scripts in docker-free-fakes/. They connect as the
// owner of the tables (MIGRATION_DATABASE_URL); the app builds its own pool from DATABASE_URL, a role
// that owns nothing, in src/lib/server/db/knex.ts.
const config: Knex.Config = {
	client: 'pg',
	connection: process.env.MIGRATION_DATABASE_URL,
	migrations: {
		directory: fileURLToPath(new URL('./migrations', import.meta.url)),
		loadExtensions: ['.ts'],
		tableName: 'knex_migrations'
	},
	seeds: {
		directory: fileURLToPath(new URL('./seeds', import.meta.url)),
		loadExtensions: ['.ts']
	}
};

export default config;
