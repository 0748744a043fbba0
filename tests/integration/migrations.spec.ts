import knex from 'knex';
import pg from 'pg';
import { afterAll, describe, expect, it } from 'vitest';
import config from '../../knexfile';
import { databaseUrl } from '../support/env';

const scratchName = `tenderloom_migrations_${process.pid}`;
const scratchUrl = () => {
	const url = new URL(databaseUrl());
	url.pathname = `/${scratchName}`;
	return url.toString();
};

async function admin(sql: string) {
	const client = new pg.Client({ connectionString: databaseUrl() });
	await client.connect();
	try {
		await client.query(sql);
	} finally {
		await client.end();
	}
}

afterAll(() => admin(`drop database if exists ${scratchName}`));

describe('migrations', () => {
	it('run up, all the way down, and up again on an empty database', async () => {
		await admin(`create database ${scratchName}`);
		const db = knex({ ...config, connection: scratchUrl() });
		try {
			await db.migrate.latest();
			const tables = async () =>
				(
					await db.raw(
						`select table_name from information_schema.tables where table_schema = 'public' and table_name not like 'knex_%' order by 1`
					)
				).rows.map((r: { table_name: string }) => r.table_name);
			const afterUp = await tables();
			expect(afterUp).toEqual(
				expect.arrayContaining(['organisations', 'users', 'accounts', 'sessions', 'verification_token'])
			);
			await db.migrate.rollback(undefined, true);
			expect(await tables()).toEqual([]);
			await db.migrate.latest();
			expect(await tables()).toEqual(afterUp);
		} finally {
			await db.destroy();
		}
	});
});
