// A scratch database of the test cluster, made by its superuser for the owner of the tables, as
// `npm start` makes its own; and the project's `db.ts` script (migrate, seed, rollback) run on it with tsx,
// since Node inside vitest cannot import the TypeScript migrations and seeds.
import { spawnSync } from 'node:child_process';
import pg from 'pg';
import { expect } from 'vitest';
import { databaseAdminUrl, databaseOwnerUrl, databaseUrl } from './env';

/** The cluster's superuser runs one statement. */
export async function asAdmin(sql: string): Promise<void> {
	const client = new pg.Client({ connectionString: databaseAdminUrl() });
	await client.connect();
	try {
		await client.query(sql);
	} finally {
		await client.end();
	}
}

export function scratchDatabase(name: string) {
	/** `base` (a role's URL on the test cluster) pointed at the scratch database. */
	const url = (base = databaseOwnerUrl()) => {
		const at = new URL(base);
		at.pathname = `/${name}`;
		return at.toString();
	};
	return {
		name,
		url,
		/** The app role's URL of the scratch database. */
		appUrl: () => url(databaseUrl()),
		create: () => asAdmin(`create database ${name} owner ${new URL(databaseOwnerUrl()).username}`),
		drop: () => asAdmin(`drop database if exists ${name}`),
		/** `db.ts <command>` on the scratch database; with `app`, the app's services in it use it too. */
		script(command: string, { app = false } = {}): string {
			const result = spawnSync(process.execPath, ['--import', 'tsx', 'docker-free-fakes/db.ts', command], {
				env: {
					...process.env,
					MIGRATION_DATABASE_URL: url(),
					...(app ? { DATABASE_URL: url(databaseUrl()) } : {})
				},
				encoding: 'utf8'
			});
			expect(result.status, result.stderr).toBe(0);
			return result.stdout;
		}
	};
}
