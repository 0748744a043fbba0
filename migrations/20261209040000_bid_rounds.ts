import type { Knex } from 'knex';

// A second (third…) round of bids after the opening: the buyer invites some or all bidders to revise by a
// new deadline, each with its own feedback. Round 1 is the original bidding up to the event's deadline.
// The seal now holds per round, in the database: the buying organisation sees a revision of round N only
// once the event's deadline and round N's deadline have passed; a supplier always sees its own.
const SEALED = (deadlineCheck: string) => `
	(r.supplier_organisation_id = p_viewer_organisation
		or (e.organisation_id = p_viewer_organisation and ${deadlineCheck}
			and (r.round = 1 or exists (select 1 from bid_rounds b
				where b.event_id = r.event_id and b.number = r.round and b.deadline <= p_now))))`;

const visible = (deadlineCheck: string) => `
	create or replace function visible_bid_revisions(p_event uuid, p_viewer_organisation uuid, p_now timestamptz)
	returns setof bid_revisions
	language sql stable as $$
		select r.*
		from bid_revisions r
		join events e on e.id = r.event_id
		where r.event_id = p_event and ${deadlineCheck}
	$$;`;

const lines = (deadlineCheck: string) => `
	create or replace function sealed_bid_lines(p_event uuid, p_viewer_organisation uuid, p_now timestamptz)
	returns table (revision_id uuid, supplier_organisation_id uuid, revision_number integer, item_id uuid,
		unit_price numeric, max_quantity numeric)
	language sql stable as $$
		select r.id, r.supplier_organisation_id, r.number, l.item_id, l.unit_price, l.max_quantity
		from bid_revisions r
		join bid_lines l on l.revision_id = r.id
		join events e on e.id = r.event_id
		where r.event_id = p_event and ${deadlineCheck}
	$$;`;

const BEFORE = `(r.supplier_organisation_id = p_viewer_organisation
	or (e.organisation_id = p_viewer_organisation and e.deadline <= p_now))`;

export async function up(knex: Knex): Promise<void> {
	await knex.schema.createTable('bid_rounds', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.uuid('event_id').notNullable().references('id').inTable('events').onDelete('CASCADE');
		t.integer('number').notNullable();
		t.timestamp('deadline', { useTz: true }).notNullable();
		// none; rank: the supplier's own rank; gap: how far (percent) its price is above the best
		t.text('feedback').notNullable().checkIn(['none', 'rank', 'gap'], 'bid_rounds_feedback_check');
		t.text('feedback_per').notNullable().checkIn(['item', 'lot'], 'bid_rounds_feedback_per_check');
		t.integer('started_by').notNullable().references('id').inTable('users');
		t.timestamp('started_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
		t.timestamp('opened_at', { useTz: true });
		t.unique(['event_id', 'number']);
	});
	await knex.raw(`alter table bid_rounds add constraint bid_rounds_number_after_first check (number >= 2)`);
	await knex.schema.createTable('bid_round_suppliers', (t) => {
		t.uuid('round_id').notNullable().references('id').inTable('bid_rounds').onDelete('CASCADE');
		t.uuid('supplier_organisation_id').notNullable().references('id').inTable('organisations');
		// This supplier's own feedback only: its rank or gap per item or lot, never another's price or name.
		t.jsonb('feedback').notNullable().defaultTo('[]');
		t.primary(['round_id', 'supplier_organisation_id']);
	});
	await knex.schema.alterTable('bid_revisions', (t) => {
		t.integer('round').notNullable().defaultTo(1);
	});
	await knex.schema.alterTable('award_runs', (t) => {
		// The round whose bids the run used: the latest revision of each supplier among the opened rounds.
		t.integer('round').notNullable().defaultTo(1);
	});
	// As events_keep_the_seal: a round's deadline only moves later, and its opening comes once, after it.
	// A round stays the round it is (its event and number): visible_bid_revisions finds it by them, so a
	// passed round moved in from another event or renumbered would open another round's sealed bids.
	await knex.raw(`
		create function bid_rounds_keep_the_seal() returns trigger language plpgsql as $$
		begin
			if new.event_id <> old.event_id or new.number <> old.number then
				raise exception 'a round keeps its event and number (the seal)';
			end if;
			if new.deadline < old.deadline then
				raise exception 'a round''s deadline cannot be brought forward (the seal)';
			end if;
			if new.opened_at is distinct from old.opened_at then
				if old.opened_at is not null then
					raise exception 'a round is opened once';
				end if;
				if new.opened_at < new.deadline then
					raise exception 'a round cannot be opened before its deadline';
				end if;
			end if;
			return new;
		end $$;
		create trigger bid_rounds_keep_the_seal before update on bid_rounds
			for each row execute function bid_rounds_keep_the_seal();
	`);
	// visible_bid_revisions trusts bid_revisions.round and bid_rounds' deadlines, so the database holds
	// those too, against whoever sends SQL with the app's credentials: a round is never deleted (nor
	// re-inserted with a deadline passed) and starts only as the next one, with a future deadline, when no
	// round of the event is open; a revision never moves to another round, event, supplier or number, and
	// is made in a round after the first only while that round is open and by a supplier invited to it.
	// The app never updates bid_revisions; a delete is left to the cascade from the event.
	await knex.raw(`
		create function bid_rounds_start_sealed() returns trigger language plpgsql as $$
		begin
			if tg_op = 'DELETE' then
				-- The cascade from a deleted event (its row already gone) takes its rounds with it.
				if exists (select 1 from events e where e.id = old.event_id) then
					raise exception 'a round is never deleted (the seal)' using errcode = 'check_violation';
				end if;
				return old;
			end if;
			if new.deadline <= now() then
				raise exception 'a round''s deadline must be in the future (the seal)' using errcode = 'check_violation';
			end if;
			perform 1 from events e where e.id = new.event_id for update;
			if new.number <> coalesce((select max(b.number) from bid_rounds b where b.event_id = new.event_id), 1) + 1 then
				raise exception 'a round starts only as the next one of its event' using errcode = 'check_violation';
			end if;
			if exists (select 1 from bid_rounds b where b.event_id = new.event_id and b.deadline > now()) then
				raise exception 'a round starts only once the previous one has closed' using errcode = 'check_violation';
			end if;
			return new;
		end $$;
		create trigger bid_rounds_start_sealed before insert or delete on bid_rounds
			for each row execute function bid_rounds_start_sealed();

		create function bid_revisions_keep_their_round() returns trigger language plpgsql as $$
		begin
			if tg_op = 'UPDATE' then
				if new.round <> old.round or new.event_id <> old.event_id
					or new.supplier_organisation_id <> old.supplier_organisation_id or new.number <> old.number then
					raise exception 'a bid revision keeps its round, event, supplier and number (the seal)'
						using errcode = 'check_violation';
				end if;
				return new;
			end if;
			if new.round > 1 and not exists (select 1 from bid_rounds b
				join bid_round_suppliers s on s.round_id = b.id
				where b.event_id = new.event_id and b.number = new.round and b.deadline > now()
					and s.supplier_organisation_id = new.supplier_organisation_id) then
				raise exception 'a revision in round % is made only while that round is open, by a supplier invited to it',
					new.round using errcode = 'check_violation';
			end if;
			return new;
		end $$;
		create trigger bid_revisions_keep_their_round before insert or update on bid_revisions
			for each row execute function bid_revisions_keep_their_round();
	`);
	await knex.raw(visible(SEALED('e.deadline <= p_now')));
	await knex.raw(lines(SEALED('e.deadline <= p_now')));
}

export async function down(knex: Knex): Promise<void> {
	await knex.raw(visible(BEFORE));
	await knex.raw(lines(BEFORE));
	await knex.raw('drop trigger if exists bid_revisions_keep_their_round on bid_revisions');
	await knex.raw('drop function if exists bid_revisions_keep_their_round()');
	await knex.raw('drop trigger if exists bid_rounds_start_sealed on bid_rounds');
	await knex.raw('drop function if exists bid_rounds_start_sealed()');
	await knex.raw('drop trigger if exists bid_rounds_keep_the_seal on bid_rounds');
	await knex.raw('drop function if exists bid_rounds_keep_the_seal()');
	await knex.schema.alterTable('award_runs', (t) => t.dropColumn('round'));
	await knex.schema.alterTable('bid_revisions', (t) => t.dropColumn('round'));
	await knex.schema.dropTableIfExists('bid_round_suppliers');
	await knex.schema.dropTableIfExists('bid_rounds');
}
