import type { Knex } from 'knex';

// A bid never changes once stored: a new price is a new revision. The app's own role may insert and read
// revisions and their lines, price breaks, bundle offers and criteria answers, but no longer update,
// delete or truncate any of them (nothing in the app does). So the app's credentials cannot move a line
// into another revision, rewrite a sealed price, change a revision's currency, capacity or time, or turn
// it into a withdrawal behind the seal of visible_bid_revisions. Cascades from the owner's foreign keys
// still run (PostgreSQL runs them as the table's owner); the trigger bid_revisions_keep_their_round
// stays for whoever else may write.
const KEPT = [
	'bid_revisions',
	'bid_lines',
	'price_breaks',
	'bundle_offers',
	'bundle_offer_items',
	'bid_criterion_answers'
];

function appRole(): string {
	const role = process.env.APP_DATABASE_ROLE ?? 'tenderloom_app';
	// Written into the SQL below as an identifier.
	if (!/^[a-z_][a-z0-9_]{0,62}$/.test(role))
		throw new Error(`APP_DATABASE_ROLE "${role}" is not a plain role name`);
	return role;
}

async function roleExists(knex: Knex, role: string): Promise<boolean> {
	return (await knex.raw('select 1 from pg_roles where rolname = ?', [role])).rows.length > 0;
}

export async function up(knex: Knex): Promise<void> {
	const app = appRole();
	if (!(await roleExists(knex, app))) return;
	await knex.raw(`
		revoke update, delete, truncate on ${KEPT.join(', ')} from ${app};
	`);
}

export async function down(knex: Knex): Promise<void> {
	const app = appRole();
	if (!(await roleExists(knex, app))) return;
	await knex.raw(`
		grant update, delete on ${KEPT.join(', ')} to ${app};
	`);
}
