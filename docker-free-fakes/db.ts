// Migrations and demo seeds through Knex, run with tsx (the knex CLI cannot load TypeScript here).
// `npm run db:migrate | db:rollback | db:seed` connect as the owner: MIGRATION_DATABASE_URL, or the
// `npm start` stack's database. The app's own DATABASE_URL cannot migrate: that role owns nothing.
import knex from 'knex';
import config from '../knexfile';
import { installJobQueues } from '../src/lib/server/jobs/index';

async function withDatabase<T>(url: string, work: (db: knex.Knex) => Promise<T>): Promise<T> {
	const db = knex({ ...config, connection: url, pool: { min: 0, max: 2 } });
	try {
		return await work(db);
	} finally {
		await db.destroy();
	}
}

/** The tables, then pg-boss's schema and queues: the app itself may not create them. */
export async function migrateDatabase(url: string): Promise<string[]> {
	const applied = await withDatabase(url, async (db) => {
		const [, applied] = (await db.migrate.latest()) as [number, string[]];
		return applied;
	});
	await installJobQueues(url);
	return applied;
}

/** Undoes the last batch, or every migration with `all`. */
export async function rollbackDatabase(url: string, all = false): Promise<string[]> {
	return withDatabase(url, async (db) => {
		const [, undone] = (await db.migrate.rollback(undefined, all)) as [number, string[]];
		return undone;
	});
}

export async function seedDatabase(url: string): Promise<void> {
	await withDatabase(url, async (db) => {
		await db.seed.run();
	});
}

const isMain = process.argv[1] && import.meta.url.endsWith(process.argv[1].split('/').pop()!);
if (isMain) {
	const command = process.argv[2];
	let url = process.env.MIGRATION_DATABASE_URL;
	if (!url && process.env.DATABASE_URL) {
		console.error(
			'MIGRATION_DATABASE_URL is not set: migrations and seeds run as the role that owns the tables, not as the app (DATABASE_URL)'
		);
		process.exit(2);
	}
	if (!url) {
		const { startPlan, appEnvironment, migrationDatabaseUrl } = await import('./local-env');
		const { fileURLToPath } = await import('node:url');
		const plan = startPlan(fileURLToPath(new URL('..', import.meta.url)));
		url = migrationDatabaseUrl(plan);
		// The seeds sign trail entries and write checkpoints with the app's settings.
		if (command === 'seed') Object.assign(process.env, appEnvironment(plan));
	}
	if (command === 'migrate')
		console.log('applied:', (await migrateDatabase(url!)).join(', ') || 'nothing new');
	else if (command === 'rollback' || command === 'rollback-all')
		console.log(
			'rolled back:',
			(await rollbackDatabase(url!, command === 'rollback-all')).join(', ') || 'nothing'
		);
	else if (command === 'seed') {
		await seedDatabase(url!);
		console.log('demo scenario loaded');
	} else {
		console.error('usage: db.ts migrate | rollback | rollback-all | seed');
		process.exit(2);
	}
}
