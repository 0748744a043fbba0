// Migrates a database up to just before one migration, so a test can put rows in the shape that
// migration finds and then check what it makes of them. Run with tsx (the migrations are TypeScript):
// MIGRATION_DATABASE_URL=… node --import tsx tests/support/migrate-before.ts <migration file name>
import knex from 'knex';
import config from '../../knexfile';

const target = process.argv[2];
const db = knex({ ...config, pool: { min: 0, max: 1 } });
try {
	const [, pending] = (await db.migrate.list()) as [unknown[], { file: string }[]];
	if (!pending.some((m) => m.file === target)) throw new Error(`${target} is not a pending migration`);
	for (const migration of pending) {
		if (migration.file === target) break;
		await db.migrate.up();
	}
} finally {
	await db.destroy();
}
