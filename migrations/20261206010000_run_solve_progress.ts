import type { Knex } from 'knex';

// Where a running award solve stands, written by its worker as the engine reports it: seconds since the
// solve began, the best award's total so far (null before the first) and the best lower bound. The run
// page shows it while the run is running; the finished result supersedes it.
export async function up(knex: Knex): Promise<void> {
	await knex.schema.alterTable('award_runs', (t) => {
		t.jsonb('solve_progress');
	});
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.alterTable('award_runs', (t) => t.dropColumn('solve_progress'));
}
