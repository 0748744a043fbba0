import type { Knex } from 'knex';

// Non-price criteria turned into money (src/lib/evaluation/criteria.ts). The buyer sets them on the draft;
// like the items they lock at publication (a trigger refuses changes once the event is not a draft).
// Suppliers answer theirs with each bid revision; evaluators score theirs per supplier after the opening.
export async function up(knex: Knex): Promise<void> {
	await knex.schema.createTable('evaluation_criteria', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.uuid('event_id').notNullable().references('events.id').onDelete('cascade');
		t.text('ref').notNullable();
		t.text('name').notNullable();
		t.text('unit').notNullable().defaultTo('');
		t.text('answered_by').notNullable();
		t.text('basis').notNullable();
		t.decimal('rate', 20, 6).notNullable();
		t.decimal('threshold', 20, 6).notNullable().defaultTo(0);
		t.text('direction').notNullable();
		t.integer('position').notNullable();
		t.unique(['event_id', 'ref']);
	});
	await knex.raw(`
		alter table evaluation_criteria
			add constraint evaluation_criteria_answered_by check (answered_by in ('supplier', 'evaluator')),
			add constraint evaluation_criteria_basis check (basis in ('percent_of_price', 'per_unit', 'per_supplier')),
			add constraint evaluation_criteria_direction check (direction in ('above', 'below')),
			add constraint evaluation_criteria_rate check (rate >= 0)`);
	await knex.raw(`
		create function evaluation_criteria_locked() returns trigger language plpgsql as $$
		declare
			v_state text;
		begin
			select state into v_state from events where id = coalesce(new.event_id, old.event_id);
			-- An event being deleted takes its criteria with it (no state left to read).
			if v_state is not null and v_state <> 'draft' then
				raise exception 'evaluation criteria are locked once the event is published' using errcode = 'P0001';
			end if;
			return coalesce(new, old);
		end $$;
		create trigger evaluation_criteria_locked before insert or update or delete on evaluation_criteria
			for each row execute function evaluation_criteria_locked();`);
	await knex.schema.createTable('bid_criterion_answers', (t) => {
		t.uuid('revision_id').notNullable().references('bid_revisions.id').onDelete('cascade');
		t.text('criterion_ref').notNullable();
		t.decimal('value', 20, 6).notNullable();
		t.primary(['revision_id', 'criterion_ref']);
	});
	await knex.schema.createTable('criterion_scores', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.uuid('event_id').notNullable().references('events.id').onDelete('cascade');
		t.text('criterion_ref').notNullable();
		t.uuid('supplier_organisation_id').notNullable().references('organisations.id');
		t.decimal('value', 20, 6).notNullable();
		t.text('comment').notNullable();
		t.integer('scored_by').notNullable().references('users.id');
		t.timestamp('scored_at', { useTz: true }).notNullable();
		t.index(['event_id', 'criterion_ref', 'supplier_organisation_id', 'scored_at']);
	});
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.dropTable('criterion_scores');
	await knex.schema.dropTable('bid_criterion_answers');
	await knex.raw('drop trigger if exists evaluation_criteria_locked on evaluation_criteria');
	await knex.raw('drop function if exists evaluation_criteria_locked()');
	await knex.schema.dropTable('evaluation_criteria');
}
