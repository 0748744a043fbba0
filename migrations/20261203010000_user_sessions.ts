import type { Knex } from 'knex';

// Server-side records of sign-in sessions. The session cookie stays an Auth.js JWT, but it carries the id
// of one of these rows and is refused once that row is ended or gone: sign-out, "sign out everywhere",
// a password change, deactivation and role changes end sessions for good.
export async function up(knex: Knex): Promise<void> {
	await knex.schema.createTable('user_sessions', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.integer('user_id').notNullable().references('id').inTable('users').onDelete('CASCADE');
		t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
		t.timestamp('last_seen', { useTz: true }).notNullable().defaultTo(knex.fn.now());
		t.timestamp('ended_at', { useTz: true });
		t.text('end_reason');
		t.text('user_agent');
		t.text('ip');
	});
	await knex.raw('create index user_sessions_open_by_user on user_sessions (user_id) where ended_at is null');
	// An ended session stays ended: nothing (a reactivation included) may bring it back.
	await knex.raw(`
		create function user_sessions_stay_ended() returns trigger language plpgsql as $$
		begin
			if old.ended_at is not null and new.ended_at is distinct from old.ended_at then
				raise exception 'an ended session stays ended';
			end if;
			return new;
		end $$;
		create trigger user_sessions_stay_ended before update on user_sessions
			for each row execute function user_sessions_stay_ended();
	`);
}

export async function down(knex: Knex): Promise<void> {
	await knex.raw('drop trigger if exists user_sessions_stay_ended on user_sessions');
	await knex.raw('drop function if exists user_sessions_stay_ended()');
	await knex.schema.dropTableIfExists('user_sessions');
}
