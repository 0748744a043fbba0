import { spawnSync } from 'node:child_process';
import knex from 'knex';
import { afterAll, expect, it } from 'vitest';
import { scratchDatabase } from '../support/scratch-database';

// 20261208013000: plans name a rule's supplier by organisation id; stored plans named it by name.
const MIGRATION = '20261208013000_plan_rules_name_suppliers_by_id.ts';
const scratch = scratchDatabase(`tenderloom_plan_suppliers_${process.pid}`);

afterAll(() => scratch.drop());

it('turns the supplier names of stored plans into organisation ids, and back on rollback', async () => {
	await scratch.create();
	const before = spawnSync(
		process.execPath,
		['--import', 'tsx', 'tests/support/migrate-before.ts', MIGRATION],
		{
			env: { ...process.env, MIGRATION_DATABASE_URL: scratch.url() },
			encoding: 'utf8'
		}
	);
	expect(before.status, before.stderr).toBe(0);
	const db = knex({ client: 'pg', connection: scratch.url() });
	try {
		const [buying] = await db('organisations')
			.insert({ name: 'Buying Office', kind: 'buyer' })
			.returning('id');
		const [north] = await db('organisations')
			.insert({ name: 'Northwind Pallets', kind: 'supplier' })
			.returning('id');
		const [user] = await db('users')
			.insert({
				email: 'buyer@example.test',
				role: 'buyer',
				organisation_id: buying.id,
				organisation_kind: 'buyer'
			})
			.returning('id');
		const [event] = await db('events')
			.insert({
				organisation_id: buying.id,
				reference: 'EV-1',
				title: 'Pallets',
				currency: 'EUR',
				incoterm: 'DAP',
				deadline: new Date(Date.now() + 86_400_000),
				created_by: user.id
			})
			.returning('id');
		const rules = [
			{ type: 'max_share', scope: 'each_item', who: 'each_supplier', percent: 60 },
			// The stored name's case need not match: names are unique per kind regardless of case.
			{ type: 'exclude', scope: 'event', who: { supplier: 'northwind pallets' } },
			{ type: 'exclude', scope: 'event', who: { supplier: 'Gone Trading' } }
		];
		const [plan] = await db('award_plans')
			.insert({ event_id: event.id, name: 'Plan', rules: JSON.stringify(rules), created_by: user.id })
			.returning('id');

		scratch.script('migrate');
		const after = (await db('award_plans').where({ id: plan.id }).first()).rules;
		expect(after).toEqual([
			rules[0],
			{ type: 'exclude', scope: 'event', who: { supplier: north.id } },
			// A name no organisation has is left as it was: the run refuses it by its rule number.
			rules[2]
		]);

		scratch.script('rollback');
		const back = (await db('award_plans').where({ id: plan.id }).first()).rules;
		expect(back[1]).toEqual({ type: 'exclude', scope: 'event', who: { supplier: 'Northwind Pallets' } });
		expect(back[2]).toEqual(rules[2]);
	} finally {
		await db.destroy();
	}
});
