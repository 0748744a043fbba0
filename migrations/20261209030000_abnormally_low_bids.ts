import type { Knex } from 'knex';

// Abnormally low bids (2014/24/EU Art. 69: ask the supplier to explain before rejecting): the buyer's
// explanation requests and the answers, and exclusions of a bid line (item_ref) or a whole bid (item_ref
// null) with their reasons; an exclusion is undone by a second reason, never deleted. A run keeps the
// exclusions that shaped its problem (award_runs.excluded).
export async function up(knex: Knex): Promise<void> {
	await knex.schema.createTable('low_price_inquiries', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.uuid('event_id').notNullable().references('id').inTable('events').onDelete('CASCADE');
		t.uuid('supplier_organisation_id').notNullable().references('id').inTable('organisations');
		t.text('item_ref');
		t.text('question').notNullable();
		t.integer('asked_by').notNullable().references('id').inTable('users');
		t.timestamp('asked_at', { useTz: true }).notNullable();
		t.text('answer');
		t.integer('answer_recorded_by').references('id').inTable('users');
		t.timestamp('answered_at', { useTz: true });
		t.index(['event_id', 'supplier_organisation_id']);
	});
	await knex.schema.createTable('bid_exclusions', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.uuid('event_id').notNullable().references('id').inTable('events').onDelete('CASCADE');
		t.uuid('supplier_organisation_id').notNullable().references('id').inTable('organisations');
		t.text('item_ref');
		t.text('reason').notNullable();
		t.integer('excluded_by').notNullable().references('id').inTable('users');
		t.timestamp('excluded_at', { useTz: true }).notNullable();
		t.text('undo_reason');
		t.integer('undone_by').references('id').inTable('users');
		t.timestamp('undone_at', { useTz: true });
		t.index(['event_id']);
	});
	// One standing exclusion per line or whole bid.
	await knex.raw(
		`create unique index bid_exclusions_one_standing on bid_exclusions
		 (event_id, supplier_organisation_id, coalesce(item_ref, '')) where undone_at is null`
	);
	await knex.schema.alterTable('award_runs', (t) => {
		t.jsonb('excluded');
	});
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.alterTable('award_runs', (t) => t.dropColumn('excluded'));
	await knex.schema.dropTable('bid_exclusions');
	await knex.schema.dropTable('low_price_inquiries');
}
