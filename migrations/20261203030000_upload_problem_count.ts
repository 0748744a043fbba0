import type { Knex } from 'knex';

// An upload's report keeps at most 100 problems (services/bids.ts); the total found is kept beside it,
// so "the first 100 of 200,000" can be shown. Older rows have no total: their report's length is it, and
// reads cap those reports too (db/bids.ts listUploads).
export async function up(knex: Knex): Promise<void> {
	await knex.raw(
		'alter table uploads add column problem_count integer constraint uploads_problem_count_check check (problem_count >= 0)'
	);
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.alterTable('uploads', (t) => t.dropColumn('problem_count'));
}
