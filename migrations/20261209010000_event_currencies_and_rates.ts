import type { Knex } from 'knex';

// Bids in several currencies. The buyer fixes, per event, the other ISO 4217 currencies a bid may use and
// each one's rate (event-currency units per one unit of the bid currency) with its source and date, before
// bids arrive. Once the event is published its rates change only by an amendment: the trigger refuses any
// insert, update or delete of a published event's rates unless an amendment of that event was recorded in
// the same transaction (its created_at is the transaction's start time, now()) whose detail names rates,
// and only while the event is open before its deadline: the rule amend() applies (services/events.ts),
// held here too, so that whoever sends SQL with the app's credentials cannot reprice the sealed bids after
// the deadline behind a dummy amendment. A revision states the currency its prices are in; null is the
// event currency (every revision made before this migration).
export async function up(knex: Knex): Promise<void> {
	await knex.schema.createTable('event_rates', (t) => {
		t.uuid('event_id').notNullable().references('id').inTable('events').onDelete('CASCADE');
		t.specificType('currency', 'char(3)').notNullable();
		t.decimal('rate', 24, 10).notNullable();
		t.text('source').notNullable();
		t.date('rate_date').notNullable();
		t.primary(['event_id', 'currency']);
	});
	await knex.raw(`
		alter table event_rates add constraint event_rates_values
			check (currency ~ '^[A-Z]{3}$' and rate > 0 and length(trim(source)) > 0);
		create function event_rates_locked_at_publication() returns trigger
		language plpgsql as $$
		declare
			v_event uuid := coalesce(new.event_id, old.event_id);
		begin
			if tg_op = 'UPDATE' and new.event_id <> old.event_id then
				raise exception 'a rate stays with its event' using errcode = 'check_violation';
			end if;
			if exists (select 1 from events e where e.id = v_event and (e.state <> 'draft' or e.published_at is not null)) then
				if not exists (select 1 from amendments a
					where a.event_id = v_event and a.created_at = now() and (a.detail -> 'rates') is not null) then
					raise exception 'the rates of a published event change only by an amendment'
						using errcode = 'check_violation';
				end if;
				if not exists (select 1 from events e where e.id = v_event and e.state = 'open' and e.deadline > now()) then
					raise exception 'the rates of an event change only while it is open, before its deadline'
						using errcode = 'check_violation';
				end if;
			end if;
			return coalesce(new, old);
		end $$;
		create trigger event_rates_locked_at_publication before insert or update or delete on event_rates
			for each row execute function event_rates_locked_at_publication();
	`);
	await knex.schema.alterTable('bid_revisions', (t) => {
		t.specificType('currency', 'char(3)');
	});
	await knex.raw(
		`alter table bid_revisions add constraint bid_revisions_currency_code check (currency ~ '^[A-Z]{3}$')`
	);
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.alterTable('bid_revisions', (t) => t.dropColumn('currency'));
	await knex.raw('drop trigger if exists event_rates_locked_at_publication on event_rates');
	await knex.raw('drop function if exists event_rates_locked_at_publication()');
	await knex.schema.dropTable('event_rates');
}
