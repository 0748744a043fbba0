// Knex's PostgreSQL dialect, which db/knex.ts extends; the package ships no types for its files.
declare module 'knex/lib/dialects/postgres/index.js' {
	import type { Knex } from 'knex';
	const PgClient: typeof Knex.Client;
	export default PgClient;
}
