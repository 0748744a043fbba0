import type { Knex } from 'knex';

// The decision trail of an event: append-only (a trigger refuses UPDATE, DELETE and TRUNCATE), each
// entry chained to the one before by SHA-256 over the previous hash and the entry's canonical JSON
// (src/lib/server/trail.ts computes and verifies the chain).
export async function up(knex: Knex): Promise<void> {
	await knex.schema.createTable('trail_entries', (t) => {
		t.bigIncrements('id');
		t.uuid('event_id').notNullable().references('id').inTable('events');
		t.integer('seq').notNullable();
		t.timestamp('at', { useTz: true }).notNullable();
		t.integer('actor_user_id').references('id').inTable('users');
		t.text('actor').notNullable();
		t.text('action').notNullable();
		t.jsonb('detail').notNullable().defaultTo('{}');
		t.specificType('previous_hash', 'char(64)');
		t.specificType('hash', 'char(64)').notNullable();
		t.unique(['event_id', 'seq']);
	});
	await knex.raw(`
		create function trail_entries_append_only() returns trigger language plpgsql as $$
		begin
			raise exception 'trail_entries is append-only';
		end $$;
		create trigger trail_entries_no_change before update or delete on trail_entries
			for each row execute function trail_entries_append_only();
		create trigger trail_entries_no_truncate before truncate on trail_entries
			for each statement execute function trail_entries_append_only();
	`);
}

export async function down(knex: Knex): Promise<void> {
	await knex.raw('drop table if exists trail_entries');
	await knex.raw('drop function if exists trail_entries_append_only()');
}
