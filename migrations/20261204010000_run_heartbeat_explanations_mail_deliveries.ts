import type { Knex } from 'knex';

// Background work that happens exactly once (issue 10).
// Award runs: one owner at a time (`owner`, a token per claim, so a stale worker's late writes are refused),
// a heartbeat from that owner (a stale one means the worker died and another takes the run over; `restarts`
// counts those takeovers), and the explanation (rule costs, conflicts, sensitivity) worked out by its own
// job after the allocation. Rows written before this migration are complete: their explanation, if any,
// is inside `result`.
// Mail: one row per mail with an idempotency key, written before the mail goes to the relay, so a
// redelivered job finds the key and never sends twice.
export async function up(knex: Knex): Promise<void> {
	await knex.schema.alterTable('award_runs', (t) => {
		t.timestamp('heartbeat_at', { useTz: true });
		t.uuid('owner');
		t.integer('restarts').notNullable().defaultTo(0);
		t.jsonb('explanation');
		t.text('explanation_status')
			.notNullable()
			.defaultTo('done')
			.checkIn(['pending', 'running', 'done', 'failed', 'not_needed'], 'award_runs_explanation_status_check');
		t.text('explanation_error');
		t.specificType('explanation_sha256', 'char(64)');
	});
	await knex.schema.createTable('mail_deliveries', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		// Such as notice:<notice id>:<address>, or mail:<job id> for a mail of the generic queue.
		t.text('key').notNullable().unique();
		t.text('recipient').notNullable();
		t.text('subject').notNullable();
		// 'sending' is written before the relay is reached; 'unknown' is a send whose outcome could not be
		// learnt (its sender died after the relay may have accepted it): not sent again, for a person to check.
		t.text('status')
			.notNullable()
			.checkIn(['sending', 'sent', 'failed', 'unknown'], 'mail_deliveries_status_check');
		// Derived from the key: the same mail always carries the same Message-ID.
		t.text('message_id').notNullable();
		t.integer('attempts').notNullable().defaultTo(0);
		// The process holding the send (host:pid) and since when: a claim older than the lease is stale.
		t.text('sender');
		t.timestamp('claimed_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
		t.timestamp('sent_at', { useTz: true });
		t.text('last_error');
		t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
	});
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.dropTableIfExists('mail_deliveries');
	await knex.schema.alterTable('award_runs', (t) => {
		for (const column of [
			'heartbeat_at',
			'owner',
			'restarts',
			'explanation',
			'explanation_status',
			'explanation_error',
			'explanation_sha256'
		])
			t.dropColumn(column);
	});
}
