import type { Knex } from 'knex';

// A run made by changing another by hand (lock an item to a supplier, move a quantity, exclude a supplier
// from an item) and solving the rest again: the run it came from and every manual change, with who made
// it, when, its cost against that run and its justification. A submission for sign-off carries the
// author's justification, which the award report prints.
export async function up(knex: Knex): Promise<void> {
	await knex.schema.alterTable('award_runs', (t) => {
		t.uuid('adjusted_from').references('id').inTable('award_runs');
		t.jsonb('adjustments');
	});
	await knex.schema.alterTable('signoffs', (t) => {
		t.text('justification');
	});
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.alterTable('signoffs', (t) => t.dropColumn('justification'));
	await knex.schema.alterTable('award_runs', (t) => {
		t.dropColumn('adjustments');
		t.dropColumn('adjusted_from');
	});
}
