import type { Knex } from 'knex';

// The seal extended from bid lines to everything that carries a price (price breaks, bundle offers):
// visible_bid_revisions(event, viewer organisation, now) is the one gate through which the app reads
// revisions with prices. A supplier sees its own; the buying organisation sees all once the deadline
// has passed. The opening of an event is recorded on the event when it first happens.
export async function up(knex: Knex): Promise<void> {
	await knex.raw(`
		create function visible_bid_revisions(p_event uuid, p_viewer_organisation uuid, p_now timestamptz)
		returns setof bid_revisions
		language sql stable as $$
			select r.*
			from bid_revisions r
			join events e on e.id = r.event_id
			where r.event_id = p_event
				and (r.supplier_organisation_id = p_viewer_organisation
					or (e.organisation_id = p_viewer_organisation and e.deadline <= p_now))
		$$;
	`);
	await knex.schema.alterTable('events', (t) => {
		// {at, by: "deadline job" | "first read after the deadline", suppliers, revisions}
		t.jsonb('opening_record');
	});
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.alterTable('events', (t) => t.dropColumn('opening_record'));
	await knex.raw('drop function if exists visible_bid_revisions(uuid, uuid, timestamptz)');
}
