import type { Knex } from 'knex';

// Sourcing events, their lots and line items, invitations, amendments, clarifications, uploads and
// sealed bids. Money and quantities are numeric (never floats); each event states its currency.
// Bid prices are read only through the function sealed_bid_lines(event, viewer organisation), which
// returns a buyer's rows only once the event's deadline has passed: the seal holds in the database,
// whatever page or route asks.
export async function up(knex: Knex): Promise<void> {
	await knex.schema.createTable('events', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.uuid('organisation_id').notNullable().references('id').inTable('organisations');
		t.text('reference').notNullable();
		t.text('title').notNullable();
		t.text('description').notNullable().defaultTo('');
		t.specificType('currency', 'char(3)').notNullable();
		// Incoterms 2020 rules
		t.text('incoterm')
			.notNullable()
			.checkIn(
				['EXW', 'FCA', 'CPT', 'CIP', 'DAP', 'DPU', 'DDP', 'FAS', 'FOB', 'CFR', 'CIF'],
				'events_incoterm_check'
			);
		t.text('delivery_place').notNullable().defaultTo('');
		t.timestamp('deadline', { useTz: true }).notNullable();
		t.text('time_zone').notNullable().defaultTo('UTC');
		t.integer('bid_validity_days').notNullable().defaultTo(90);
		t.boolean('allow_price_breaks').notNullable().defaultTo(false);
		t.boolean('allow_capacity').notNullable().defaultTo(false);
		t.boolean('allow_bundles').notNullable().defaultTo(false);
		t.text('state')
			.notNullable()
			.defaultTo('draft')
			.checkIn(
				['draft', 'open', 'closed', 'in_evaluation', 'awaiting_signoff', 'awarded', 'cancelled'],
				'events_state_check'
			);
		t.timestamp('published_at', { useTz: true });
		t.timestamp('opened_at', { useTz: true });
		t.integer('created_by').notNullable().references('id').inTable('users');
		t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
		t.timestamp('updated_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
		t.unique(['organisation_id', 'reference']);
	});
	await knex.raw(`alter table events add constraint events_currency_code check (currency ~ '^[A-Z]{3}$')`);

	await knex.schema.createTable('lots', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.uuid('event_id').notNullable().references('id').inTable('events').onDelete('CASCADE');
		t.text('ref').notNullable();
		t.text('title').notNullable().defaultTo('');
		t.unique(['event_id', 'ref']);
	});

	await knex.schema.createTable('items', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.uuid('event_id').notNullable().references('id').inTable('events').onDelete('CASCADE');
		t.uuid('lot_id').references('id').inTable('lots').onDelete('SET NULL');
		t.text('ref').notNullable();
		t.text('description').notNullable().defaultTo('');
		t.decimal('quantity', 20, 6).notNullable();
		// UN/CEFACT Recommendation 20 unit code, such as C62, KGM, MTR, LTR
		t.string('unit', 3).notNullable();
		t.decimal('baseline_unit_price', 20, 6);
		t.decimal('freight_per_unit', 20, 6);
		t.decimal('duty_per_unit', 20, 6);
		t.integer('position').notNullable();
		t.unique(['event_id', 'ref']);
	});
	await knex.raw(`alter table items add constraint items_quantity_positive check (quantity > 0),
		add constraint items_prices_not_negative check (coalesce(baseline_unit_price, 0) >= 0 and coalesce(freight_per_unit, 0) >= 0 and coalesce(duty_per_unit, 0) >= 0)`);

	await knex.schema.createTable('invitations', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.uuid('event_id').notNullable().references('id').inTable('events').onDelete('CASCADE');
		t.uuid('supplier_organisation_id').notNullable().references('id').inTable('organisations');
		t.integer('invited_by').notNullable().references('id').inTable('users');
		t.timestamp('invited_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
		t.unique(['event_id', 'supplier_organisation_id']);
	});

	await knex.schema.createTable('amendments', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.uuid('event_id').notNullable().references('id').inTable('events').onDelete('CASCADE');
		t.integer('number').notNullable();
		t.text('summary').notNullable();
		t.jsonb('detail').notNullable().defaultTo('{}');
		t.integer('created_by').notNullable().references('id').inTable('users');
		t.timestamp('created_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
		t.unique(['event_id', 'number']);
	});

	await knex.schema.createTable('questions', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.uuid('event_id').notNullable().references('id').inTable('events').onDelete('CASCADE');
		t.uuid('supplier_organisation_id').notNullable().references('id').inTable('organisations');
		t.integer('asked_by').notNullable().references('id').inTable('users');
		t.text('text').notNullable();
		t.timestamp('asked_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
		// The answer goes to every invited supplier with the asker anonymised: the question as published.
		t.text('published_question');
		t.text('answer');
		t.integer('answered_by').references('id').inTable('users');
		t.timestamp('answered_at', { useTz: true });
	});

	await knex.schema.createTable('uploads', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.uuid('event_id').notNullable().references('id').inTable('events').onDelete('CASCADE');
		t.uuid('supplier_organisation_id').notNullable().references('id').inTable('organisations');
		t.integer('uploaded_by').notNullable().references('id').inTable('users');
		// A generated key, never the supplier's file name; the name is kept only to show it back.
		t.text('storage_key').notNullable().unique();
		t.specificType('sha256', 'char(64)').notNullable();
		t.bigInteger('size_bytes').notNullable();
		t.text('file_name').notNullable();
		t.text('kind').checkIn(['xlsx', 'csv'], 'uploads_kind_check');
		t.text('status').notNullable().checkIn(['accepted', 'rejected'], 'uploads_status_check');
		t.jsonb('report').notNullable().defaultTo('[]');
		t.timestamp('received_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
	});

	await knex.schema.createTable('bid_revisions', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.uuid('event_id').notNullable().references('id').inTable('events').onDelete('CASCADE');
		t.uuid('supplier_organisation_id').notNullable().references('id').inTable('organisations');
		t.integer('number').notNullable();
		t.text('source').notNullable().checkIn(['upload', 'screen', 'withdrawal'], 'bid_revisions_source_check');
		t.uuid('upload_id').references('id').inTable('uploads');
		t.decimal('capacity', 20, 6);
		t.integer('submitted_by').notNullable().references('id').inTable('users');
		// Server time, the receipt time of Directive 2014/24/EU Annex IV.
		t.timestamp('submitted_at', { useTz: true }).notNullable().defaultTo(knex.fn.now());
		t.unique(['event_id', 'supplier_organisation_id', 'number']);
	});

	await knex.schema.createTable('bid_lines', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.uuid('revision_id').notNullable().references('id').inTable('bid_revisions').onDelete('CASCADE');
		t.uuid('item_id').notNullable().references('id').inTable('items').onDelete('CASCADE');
		t.decimal('unit_price', 20, 6).notNullable();
		t.decimal('max_quantity', 20, 6);
		t.unique(['revision_id', 'item_id']);
	});
	await knex.raw(
		`alter table bid_lines add constraint bid_lines_values check (unit_price >= 0 and coalesce(max_quantity, 1) > 0)`
	);

	await knex.schema.createTable('price_breaks', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.uuid('bid_line_id').notNullable().references('id').inTable('bid_lines').onDelete('CASCADE');
		t.decimal('from_quantity', 20, 6).notNullable();
		t.decimal('unit_price', 20, 6).notNullable();
		t.unique(['bid_line_id', 'from_quantity']);
	});
	await knex.raw(
		`alter table price_breaks add constraint price_breaks_values check (from_quantity > 0 and unit_price >= 0)`
	);

	await knex.schema.createTable('bundle_offers', (t) => {
		t.uuid('id').primary().defaultTo(knex.raw('gen_random_uuid()'));
		t.uuid('revision_id').notNullable().references('id').inTable('bid_revisions').onDelete('CASCADE');
		t.text('ref').notNullable();
		t.decimal('price', 20, 6).notNullable();
		t.unique(['revision_id', 'ref']);
	});
	await knex.schema.createTable('bundle_offer_items', (t) => {
		t.uuid('bundle_offer_id').notNullable().references('id').inTable('bundle_offers').onDelete('CASCADE');
		t.uuid('item_id').notNullable().references('id').inTable('items').onDelete('CASCADE');
		t.decimal('quantity', 20, 6).notNullable();
		t.primary(['bundle_offer_id', 'item_id']);
	});

	// The seal: a supplier reads its own lines at any time; the buying organisation only after the
	// deadline (an event past its deadline counts as closed even if the closing job is late).
	await knex.raw(`
		create function sealed_bid_lines(p_event uuid, p_viewer_organisation uuid, p_now timestamptz)
		returns table (revision_id uuid, supplier_organisation_id uuid, revision_number integer, item_id uuid,
			unit_price numeric, max_quantity numeric)
		language sql stable as $$
			select r.id, r.supplier_organisation_id, r.number, l.item_id, l.unit_price, l.max_quantity
			from bid_revisions r
			join bid_lines l on l.revision_id = r.id
			join events e on e.id = r.event_id
			where r.event_id = p_event
				and (r.supplier_organisation_id = p_viewer_organisation
					or (e.organisation_id = p_viewer_organisation and e.deadline <= p_now))
		$$;
	`);
}

export async function down(knex: Knex): Promise<void> {
	await knex.raw('drop function if exists sealed_bid_lines(uuid, uuid, timestamptz)');
	for (const table of [
		'bundle_offer_items',
		'bundle_offers',
		'price_breaks',
		'bid_lines',
		'bid_revisions',
		'uploads',
		'questions',
		'amendments',
		'invitations',
		'items',
		'lots',
		'events'
	]) {
		await knex.schema.dropTableIfExists(table);
	}
}
