import { randomUUID } from 'node:crypto';
import type { Knex } from 'knex';
import { afterAll, describe, expect, it } from 'vitest';
import { closeDb, db, pool } from '../../src/lib/server/db/knex';
import { databaseUrl } from '../support/env';

// The app's pool prepares each statement with parameters once per connection (db/knex.ts). What a
// connection holds prepared is PostgreSQL's own view pg_prepared_statements (PostgreSQL 15 manual, 54.16),
// which counts the plans each statement was executed with (generic_plans + custom_plans).

const opened: Knex[] = [];
const small = (preparedPerConnection: number) => {
	const made = pool(databaseUrl(), { max: 1, preparedPerConnection });
	opened.push(made);
	return made;
};

afterAll(async () => {
	await Promise.all(opened.map((made) => made.destroy()));
	await closeDb();
});

interface Prepared {
	statement: string;
	executions: number;
}

const preparedOn = async (trx: Knex.Transaction): Promise<Prepared[]> =>
	(
		await trx.raw<{ rows: Prepared[] }>(
			`select statement, (generic_plans + custom_plans)::int as executions
			   from pg_prepared_statements where from_sql = false order by statement`
		)
	).rows;

describe('statements prepared once per connection', () => {
	it('runs a statement with parameters of the app pool twice through one prepared statement', async () => {
		await db().transaction(async (trx) => {
			const before = await preparedOn(trx);
			for (const id of [randomUUID(), randomUUID()])
				await trx('organisations').select('id').where({ id }).first();
			const made = (await preparedOn(trx)).filter((p) => !before.some((b) => b.statement === p.statement));
			expect(made).toEqual([
				{ statement: 'select "id" from "organisations" where "id" = $1 limit $2', executions: 2 }
			]);
		});
	});

	it('leaves statements without parameters unprepared, so SQL of several commands still runs', async () => {
		const knex = small(10);
		await knex.transaction(async (trx) => {
			await trx.raw('select 1 as one; select 2 as two');
			expect(await preparedOn(trx)).toEqual([]);
		});
	});

	it('prepares at most the set number of texts on a connection and runs the others unprepared', async () => {
		const knex = small(2);
		await knex.transaction(async (trx) => {
			const answers = [];
			for (const n of [1, 2, 3, 4])
				answers.push(
					(await trx.raw<{ rows: { n: number }[] }>(`select ?::int + ${n} as n`, [10])).rows[0]!.n
				);
			expect(answers).toEqual([11, 12, 13, 14]);
			expect((await preparedOn(trx)).map((p) => p.statement)).toEqual([
				'select $1::int + 1 as n',
				'select $1::int + 2 as n'
			]);
		});
	});

	it('drops a connection whose prepared statement a change of columns made stale, and goes on', async () => {
		const knex = small(10);
		const backend = async () =>
			(await knex.raw<{ rows: { pid: number }[] }>('select pg_backend_pid() as pid')).rows[0]!.pid;
		const first = await backend();
		const stale = knex.transaction(async (trx) => {
			await trx.raw('create temporary table shifting (a int) on commit drop');
			await trx('shifting').select('*').where({ a: 1 });
			await trx.raw('alter table shifting add column b int');
			await trx('shifting').select('*').where({ a: 1 });
		});
		await expect(stale).rejects.toMatchObject({ code: '0A000' });
		expect(await backend()).not.toBe(first);
		expect((await knex.raw<{ rows: { n: number }[] }>('select ?::int as n', [5])).rows).toEqual([{ n: 5 }]);
	});
});
