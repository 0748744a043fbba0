import type { Knex } from 'knex';

// The app connects as its own role (APP_DATABASE_ROLE, default tenderloom_app; README "Connecting to
// PostgreSQL"), made by whoever runs the database, not by a migration: it must not own anything, so
// the owner's append-only triggers and missing grants bind it. It may read and write the product's
// tables, but only INSERT and SELECT the decision trail. Trail entries also get a keyed MAC
// (src/lib/server/trail.ts), whose key the database never holds.
function appRole(): string {
	const role = process.env.APP_DATABASE_ROLE ?? 'tenderloom_app';
	// Written into the SQL below as an identifier.
	if (!/^[a-z_][a-z0-9_]{0,62}$/.test(role))
		throw new Error(`APP_DATABASE_ROLE "${role}" is not a plain role name`);
	return role;
}
const DML = 'select, insert, update, delete';

async function checkedAppRole(knex: Knex): Promise<string> {
	const role = appRole();
	const { rows } = await knex.raw<{ rows: { rolsuper: boolean; is_me: boolean }[] }>(
		'select rolsuper, rolname = current_user as is_me from pg_roles where rolname = ?',
		[role]
	);
	const found = rows[0];
	if (!found)
		throw new Error(
			`the app's database role "${role}" does not exist: create it (login, no superuser) or set APP_DATABASE_ROLE`
		);
	if (found.is_me || found.rolsuper)
		throw new Error(
			`the app's database role "${role}" must be neither the role running migrations nor a superuser`
		);
	return role;
}

export async function up(knex: Knex): Promise<void> {
	await knex.schema.alterTable('trail_entries', (t) => {
		t.specificType('mac', 'char(64)');
		t.text('mac_key_id');
	});
	const app = await checkedAppRole(knex);
	await knex.raw(`
		revoke create on schema public from public;
		grant usage on schema public to ${app};
		grant ${DML} on all tables in schema public to ${app};
		grant usage, select on all sequences in schema public to ${app};
		revoke all on knex_migrations, knex_migrations_lock from ${app};
		revoke update, delete, truncate, references, trigger on trail_entries from ${app};
		alter default privileges in schema public grant ${DML} on tables to ${app};
		alter default privileges in schema public grant usage, select on sequences to ${app};

		create schema if not exists pgboss;
		grant usage on schema pgboss to ${app};
		grant ${DML} on all tables in schema pgboss to ${app};
		alter default privileges in schema pgboss grant ${DML} on tables to ${app};
	`);
}

export async function down(knex: Knex): Promise<void> {
	const app = appRole();
	const exists = (await knex.raw('select 1 from pg_roles where rolname = ?', [app])).rows.length > 0;
	if (exists)
		await knex.raw(`
			alter default privileges in schema public revoke ${DML} on tables from ${app};
			alter default privileges in schema public revoke usage, select on sequences from ${app};
			alter default privileges in schema pgboss revoke ${DML} on tables from ${app};
			revoke all on all tables in schema pgboss from ${app};
			revoke usage on schema pgboss from ${app};
			revoke all on all tables in schema public from ${app};
			revoke all on all sequences in schema public from ${app};
			revoke usage on schema public from ${app};
		`);
	await knex.schema.alterTable('trail_entries', (t) => {
		t.dropColumn('mac');
		t.dropColumn('mac_key_id');
	});
}
