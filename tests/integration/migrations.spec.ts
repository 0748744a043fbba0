import { spawnSync } from 'node:child_process';
import knex from 'knex';
import pg from 'pg';
import { afterAll, describe, expect, it } from 'vitest';
import { databaseUrl } from '../support/env';

// Migrations are TypeScript, which Node inside vitest cannot import: run them as `npm run db:*` does, with tsx.
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

function dbScript(command: string) {
	const result = spawnSync(process.execPath, ['--import', 'tsx', 'docker-free-fakes/db.ts', command], {
		env: { ...process.env, DATABASE_URL: scratchUrl() },
		encoding: 'utf8'
	});
	expect(result.status, result.stderr).toBe(0);
	return result.stdout;
}

afterAll(() => admin(`drop database if exists ${scratchName}`));

describe('migrations', () => {
	it('run up, all the way down, and up again on an empty database', async () => {
		await admin(`create database ${scratchName}`);
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

	it('loads the demo seeds twice without duplicating anything', async () => {
		await admin(`drop database if exists ${scratchName}`);
		await admin(`create database ${scratchName}`);
		dbScript('migrate');
		dbScript('seed');
		dbScript('seed');
		const db = knex({ client: 'pg', connection: scratchUrl() });
		try {
			const users = (await db('users').count({ n: '*' }).first())?.n;
			const organisations = (await db('organisations').count({ n: '*' }).first())?.n;
			// seeds/data/demo-accounts.ts: 5 staff and 8 supplier users in 1 buying and 8 supplier organisations
			expect(Number(users)).toBe(13);
			expect(Number(organisations)).toBe(9);
		} finally {
			await db.destroy();
		}
	});
});
