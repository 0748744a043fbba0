import type { Knex } from 'knex';

// Award plans (named sets of rules), award runs (the snapshot problem, its result, both hashed), sign-off
// decisions bound to those hashes, and the notices sent to suppliers. The standstill rule is kept per
// buying organisation (calendar days; local law decides, so the page marks it "confirm with local rules").
export async function up(knex: Knex): Promise<void> {
	await knex.schema.alterTable('organisations', (t) => {
		t.integer('standstill_days').notNullable().defaultTo(10);
	});
	await knex.schema.createTable('award_plans', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.uuid('event_id').notNullable().references('id').inTable('events');
		t.text('name').notNullable();
		t.jsonb('rules').notNullable().defaultTo('[]');
		t.boolean('lowest_cost').notNullable().defaultTo(false);
		t.integer('created_by').references('id').inTable('users');
		t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
		t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
		t.unique(['event_id', 'name']);
	});
	await knex.schema.createTable('award_runs', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.uuid('event_id').notNullable().references('id').inTable('events');
		t.uuid('plan_id').notNullable().references('id').inTable('award_plans');
		t.integer('number').notNullable();
		t.text('plan_name').notNullable();
		t.text('status')
			.notNullable()
			.checkIn(['queued', 'running', 'done', 'failed', 'cancelled'], 'award_runs_status_check');
		t.boolean('cancel_requested').notNullable().defaultTo(false);
		t.jsonb('problem').notNullable();
		t.specificType('problem_sha256', 'char(64)').notNullable();
		t.jsonb('result');
		t.specificType('result_sha256', 'char(64)');
		t.text('solver_version');
		t.jsonb('options').notNullable().defaultTo('{}');
		t.text('error');
		t.integer('attempts').notNullable().defaultTo(0);
		t.integer('created_by').notNullable().references('id').inTable('users');
		t.timestamp('queued_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
		t.timestamp('started_at', { useTz: true });
		t.timestamp('finished_at', { useTz: true });
		t.unique(['event_id', 'number']);
	});
	await knex.schema.createTable('signoffs', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.uuid('event_id').notNullable().references('id').inTable('events');
		t.uuid('run_id').notNullable().references('id').inTable('award_runs');
		t.integer('submitted_by').notNullable().references('id').inTable('users');
		t.timestamp('submitted_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
		// sha256(problem_sha256 + result_sha256) of the run as submitted: the decision is bound to it.
		t.specificType('bound_hash', 'char(64)').notNullable();
		t.text('decision').checkIn(['approve', 'return'], 'signoffs_decision_check');
		t.integer('decided_by').references('id').inTable('users');
		t.timestamp('decided_at', { useTz: true });
		t.text('comment');
		// Set when a later change to bids or the plan sent the event back to evaluation.
		t.timestamp('superseded_at', { useTz: true });
		t.text('superseded_reason');
	});
	await knex.raw(
		`alter table signoffs add constraint signoffs_not_by_author check (decided_by is null or decided_by <> submitted_by)`
	);
	await knex.schema.createTable('notices', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.uuid('event_id').notNullable().references('id').inTable('events');
		t.uuid('run_id').notNullable().references('id').inTable('award_runs');
		t.uuid('supplier_organisation_id').notNullable().references('id').inTable('organisations');
		t.text('kind').notNullable().checkIn(['award', 'regret'], 'notices_kind_check');
		t.text('status').notNullable().defaultTo('queued').checkIn(['queued', 'sent'], 'notices_status_check');
		t.timestamp('queued_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
		t.timestamp('sent_at', { useTz: true });
		t.date('standstill_ends_on').notNullable();
		t.integer('attempts').notNullable().defaultTo(0);
		t.text('last_error');
		t.unique(['run_id', 'supplier_organisation_id']);
	});
	await knex.schema.alterTable('events', (t) => {
		t.uuid('awarded_run_id').references('id').inTable('award_runs');
	});
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.alterTable('events', (t) => t.dropColumn('awarded_run_id'));
	for (const table of ['notices', 'signoffs', 'award_runs', 'award_plans'])
		await knex.schema.dropTableIfExists(table);
	await knex.schema.alterTable('organisations', (t) => t.dropColumn('standstill_days'));
}
