import knex from 'knex';
import { afterAll, describe, expect, it } from 'vitest';
import { databaseUrl } from '../support/env';
import { scratchDatabase } from '../support/scratch-database';

// The scratch database is made by the cluster's superuser for the owner, who migrates it, as in `npm start`.
const scratch = scratchDatabase(`tenderloom_migrations_${process.pid}`);
const scratchUrl = () => scratch.url();
const appRole = () => new URL(databaseUrl()).username;
const dbScript = (command: string) => scratch.script(command);

afterAll(() => scratch.drop());

describe('migrations', () => {
	it('run up, all the way down, and up again on an empty database', async () => {
		await scratch.create();
		const db = knex({ client: 'pg', connection: scratchUrl() });
		const tables = async () =>
			(
				await db.raw(
					`select table_name from information_schema.tables where table_schema = 'public' and table_name not like 'knex_%' order by 1`
				)
			).rows.map((r: { table_name: string }) => r.table_name);
		try {
			dbScript('migrate');
			const afterUp = await tables();
			expect(afterUp).toEqual(
				expect.arrayContaining(['organisations', 'users', 'accounts', 'sessions', 'verification_token'])
			);
			dbScript('rollback-all');
			expect(await tables()).toEqual([]);
			dbScript('migrate');
			expect(await tables()).toEqual(afterUp);
		} finally {
			await db.destroy();
		}
	});

	it("give the app's role the product's tables and pg-boss's, but only INSERT and SELECT on the trail", async () => {
		await scratch.drop();
		await scratch.create();
		dbScript('migrate');
		const db = knex({ client: 'pg', connection: scratchUrl() });
		const can = async (table: string, privilege: string) =>
			(await db.raw('select has_table_privilege(?, ?, ?) as ok', [appRole(), table, privilege])).rows[0].ok;
		try {
			for (const privilege of ['SELECT', 'INSERT']) expect(await can('trail_entries', privilege)).toBe(true);
			for (const privilege of ['UPDATE', 'DELETE', 'TRUNCATE', 'TRIGGER', 'REFERENCES'])
				expect(await can('trail_entries', privilege), privilege).toBe(false);
			for (const privilege of ['SELECT', 'INSERT', 'UPDATE', 'DELETE'])
				expect(await can('events', privilege), privilege).toBe(true);
			expect(await can('events', 'TRUNCATE')).toBe(false);
			expect(await can('knex_migrations', 'INSERT')).toBe(false);
			expect(await can('pgboss.job', 'UPDATE')).toBe(true);
			expect(await can('pgboss.job', 'TRUNCATE')).toBe(false);
			// The default privileges reach a table the owner makes later, as the next migration will.
			await db.raw('create table later_table (id int)');
			expect(await can('later_table', 'UPDATE')).toBe(true);
		} finally {
			await db.destroy();
		}
	});
});
