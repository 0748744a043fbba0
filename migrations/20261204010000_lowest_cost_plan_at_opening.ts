import type { Knex } from 'knex';

// The lowest-cost plan (no rules) is made in the transaction that opens an event's bids
// (services/events.ts closeIfDue), no longer by listing the plans. Events opened before get it here.
export async function up(knex: Knex): Promise<void> {
	await knex.raw(`
		insert into award_plans (event_id, name, rules, lowest_cost)
		select id, 'Lowest cost (no rules)', '[]'::jsonb, true
		from events
		where state not in ('draft', 'open')
		on conflict (event_id, name) do nothing
	`);
}

// The plans stay: they may carry runs.
export async function down(): Promise<void> {}
