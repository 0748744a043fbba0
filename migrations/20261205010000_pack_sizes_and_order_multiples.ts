import type { Knex } from 'knex';

// Whole steps of a quantity (the award engine's units.ts): an item may be ordered in multiples
// (`order_multiple`, set by the buyer with the item list), and where the event allows it a supplier may
// state that it sells an item in packs (`pack_size` on its bid line). Both are optional and positive.
export async function up(knex: Knex): Promise<void> {
	await knex.schema.alterTable('events', (t) => {
		t.boolean('allow_pack_sizes').notNullable().defaultTo(false);
	});
	await knex.schema.alterTable('items', (t) => {
		t.decimal('order_multiple', 20, 6);
	});
	await knex.schema.alterTable('bid_lines', (t) => {
		t.decimal('pack_size', 20, 6);
	});
	await knex.raw(
		`alter table items add constraint items_order_multiple_positive check (coalesce(order_multiple, 1) > 0)`
	);
	await knex.raw(
		`alter table bid_lines add constraint bid_lines_pack_size_positive check (coalesce(pack_size, 1) > 0)`
	);
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.alterTable('bid_lines', (t) => t.dropColumn('pack_size'));
	await knex.schema.alterTable('items', (t) => t.dropColumn('order_multiple'));
	await knex.schema.alterTable('events', (t) => t.dropColumn('allow_pack_sizes'));
}
