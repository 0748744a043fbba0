// What the stack runner (docker-free-fakes/stack.ts) hands the integration and browser tests.
function required(name: string): string {
	const value = process.env[name];
	if (!value)
		throw new Error(`${name} is not set: run these tests through \`npm test\`, which starts the services`);
	return value;
}

export const appUrl = () => required('APP_URL');
export const databaseUrl = () => required('DATABASE_URL');
export const mailApi = () => required('MAIL_FAKE_API');
export const chromiumPath = () => process.env.CHROMIUM_PATH ?? '/usr/bin/chromium';
