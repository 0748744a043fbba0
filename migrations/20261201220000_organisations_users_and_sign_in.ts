import type { Knex } from 'knex';

// Organisations, users with roles, the tables @auth/pg-adapter expects (its column names, quoted
// camelCase included), the sign-in rate-limit store and a log of account changes.
export async function up(knex: Knex): Promise<void> {
	await knex.raw('create extension if not exists pgcrypto');

	await knex.schema.createTable('organisations', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.text('name').notNullable();
		t.text('kind').notNullable().checkIn(['buyer', 'supplier'], 'organisations_kind_check');
		t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
		// lets users reference (id, kind) so the database itself ties each role to the right kind
		t.unique(['id', 'kind']);
	});
	await knex.raw('create unique index organisations_kind_name_unique on organisations (kind, lower(name))');

	await knex.schema.createTable('users', (t) => {
		t.increments('id').primary();
		t.text('name');
		t.text('email').notNullable().unique();
		t.timestamp('emailVerified', { useTz: true });
		t.text('image');
		t.text('role')
			.notNullable()
			.checkIn(['admin', 'buyer', 'approver', 'supplier', 'auditor'], 'users_role_check');
		t.uuid('organisation_id').notNullable();
		t.text('organisation_kind').notNullable();
		t.text('password_hash');
		t.timestamp('deactivated_at', { useTz: true });
		t.integer('invited_by').references('id').inTable('users');
		t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
		t.foreign(['organisation_id', 'organisation_kind']).references(['id', 'kind']).inTable('organisations');
	});
	await knex.raw(`
		alter table users
			add constraint users_email_lower check (email = lower(email)),
			add constraint users_role_matches_organisation check ((role = 'supplier') = (organisation_kind = 'supplier')),
			add constraint users_password_staff_only check (password_hash is null or role <> 'supplier')
	`);

	await knex.schema.createTable('accounts', (t) => {
		t.increments('id').primary();
		t.integer('userId').notNullable().references('id').inTable('users').onDelete('CASCADE');
		t.string('type', 255).notNullable();
		t.string('provider', 255).notNullable();
		t.string('providerAccountId', 255).notNullable();
		t.text('refresh_token');
		t.text('access_token');
		t.bigInteger('expires_at');
		t.text('id_token');
		t.text('scope');
		t.text('session_state');
		t.text('token_type');
	});
	await knex.schema.createTable('sessions', (t) => {
		t.increments('id').primary();
		t.integer('userId').notNullable().references('id').inTable('users').onDelete('CASCADE');
		t.timestamp('expires', { useTz: true }).notNullable();
		t.string('sessionToken', 255).notNullable();
	});
	await knex.schema.createTable('verification_token', (t) => {
		t.text('identifier').notNullable();
		t.timestamp('expires', { useTz: true }).notNullable();
		t.text('token').notNullable();
		t.primary(['identifier', 'token']);
	});

	// The store of rate-limiter-flexible's RateLimiterPostgres (its own schema), shared by every web process.
	await knex.schema.createTable('sign_in_limits', (t) => {
		t.string('key', 255).primary();
		t.integer('points').notNullable().defaultTo(0);
		t.bigInteger('expire');
	});

	await knex.schema.createTable('account_events', (t) => {
		t.bigIncrements('id').primary();
		t.timestamp('at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
		t.integer('actor_user_id').references('id').inTable('users');
		t.integer('subject_user_id').references('id').inTable('users');
		t.text('action').notNullable();
		t.jsonb('detail').notNullable().defaultTo('{}');
		t.text('ip');
	});
	await knex.raw(`
		create function account_events_append_only() returns trigger language plpgsql as $$
		begin
			raise exception 'account_events is append-only';
		end $$;
		create trigger account_events_no_change before update or delete on account_events
			for each row execute function account_events_append_only();
	`);
}

export async function down(knex: Knex): Promise<void> {
	await knex.raw('drop trigger if exists account_events_no_change on account_events');
	await knex.raw('drop function if exists account_events_append_only()');
	for (const table of [
		'account_events',
		'sign_in_limits',
		'verification_token',
		'sessions',
		'accounts',
		'users'
	]) {
		await knex.schema.dropTableIfExists(table);
	}
	await knex.schema.dropTableIfExists('organisations');
}
