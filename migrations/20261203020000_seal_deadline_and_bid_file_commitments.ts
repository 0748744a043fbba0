import type { Knex } from 'knex';

// The seal as a rule of the database, so that no route, job or SQL session of the app's role can open
// bids early: once published, an event's deadline only moves later (nothing lets a buyer bring a
// published time limit forward) and the event never returns to draft; the opening is recorded once,
// never before the deadline. Each upload gets a commitment (SHA-256 over a random salt and the file)
// for the trail; its salt stays here until the opening reveals it.
export async function up(knex: Knex): Promise<void> {
	await knex.raw(`
		create function events_keep_the_seal() returns trigger
		language plpgsql as $$
		begin
			if tg_op = 'INSERT' then
				if new.opened_at < new.deadline then
					raise exception 'bids cannot be opened before the bid deadline (%)', new.deadline
						using errcode = 'check_violation';
				end if;
				return new;
			end if;
			if old.state <> 'draft' or old.published_at is not null then
				if new.deadline < old.deadline then
					raise exception 'the bid deadline of a published event can only move later (% is before %)',
						new.deadline, old.deadline using errcode = 'check_violation';
				end if;
				if new.state = 'draft'
					or (old.published_at is not null and new.published_at is distinct from old.published_at) then
					raise exception 'a published event cannot return to draft' using errcode = 'check_violation';
				end if;
			end if;
			if new.opened_at is distinct from old.opened_at then
				if old.opened_at is not null then
					raise exception 'the opening of an event is recorded once' using errcode = 'check_violation';
				end if;
				if new.opened_at < new.deadline then
					raise exception 'bids cannot be opened before the bid deadline (%)', new.deadline
						using errcode = 'check_violation';
				end if;
			end if;
			return new;
		end $$;
		create trigger events_keep_the_seal before insert or update on events
			for each row execute function events_keep_the_seal();
	`);
	await knex.schema.alterTable('uploads', (t) => {
		t.string('commitment', 64);
		t.string('commitment_salt', 64);
	});
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.alterTable('uploads', (t) => {
		t.dropColumn('commitment_salt');
		t.dropColumn('commitment');
	});
	await knex.raw('drop trigger if exists events_keep_the_seal on events');
	await knex.raw('drop function if exists events_keep_the_seal()');
}
