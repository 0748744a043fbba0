import type { Knex } from 'knex';

// Tags of an invited supplier within an event ("incumbent", "small_business", ...), set by the buyer and
// used by award rules that speak of a group of suppliers ({ "tag": "small_business" }).
export async function up(knex: Knex): Promise<void> {
	await knex.schema.alterTable('invitations', (t) => {
		t.specificType('tags', 'text[]').notNullable().defaultTo('{}');
	});
}

export async function down(knex: Knex): Promise<void> {
	await knex.schema.alterTable('invitations', (t) => t.dropColumn('tags'));
}
