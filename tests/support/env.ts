// What the stack runner (docker-free-fakes/stack.ts) hands the integration and browser tests.
function required(name: string): string {
	const value = process.env[name];
	if (!value)
		throw new Error(`${name} is not set: run these tests through \`npm test\`, which starts the services`);
	return value;
}

export const appUrl = () => required('APP_URL');
/** The app's own role: what the web server and the worker connect as. */
export const databaseUrl = () => required('DATABASE_URL');
/** The role that owns the tables: for tests that play a database owner turned attacker. */
export const databaseOwnerUrl = () => required('DATABASE_OWNER_URL');
/** The cluster's superuser: for tests that make scratch databases. */
export const databaseAdminUrl = () => required('DATABASE_ADMIN_URL');
export const mailApi = () => required('MAIL_FAKE_API');
export const chromiumPath = () => process.env.CHROMIUM_PATH ?? '/usr/bin/chromium';
