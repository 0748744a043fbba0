// The addresses and secrets of a local stack: fixed ports and kept secrets for `npm start`,
// free ports and fresh secrets for `npm test`.
import { randomBytes } from 'node:crypto';
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { createServer } from 'node:net';
import { join } from 'node:path';
import { APP_ROLE, OWNER_ROLE, postgresUrl, PG_USER } from './postgres';

export interface StackPlan {
	dataRoot: string;
	throwaway: boolean;
	ports: { app: number; postgres: number; s3: number; smtp: number; mailApi: number };
	secrets: {
		/** The cluster's superuser: creates the database and the two roles, nothing else. */
		postgresPassword: string;
		/** The role that owns the tables and runs migrations and seeds. */
		ownerPassword: string;
		/** The role the web server and the worker connect as. */
		appPassword: string;
		authSecret: string;
		trailMacKey: string;
		/** BID_FILE_KEYS: the master key that encrypts bid files. */
		bidFileKeys: string;
	};
}

const secret = () => randomBytes(24).toString('base64url');
/** The master key that encrypts bid files (BID_FILE_KEYS), named by the day it was made. */
const bidFileKey = () =>
	`local${new Date().toISOString().slice(0, 10).replace(/-/g, '')}:${randomBytes(32).toString('base64')}`;
const freshSecrets = (): StackPlan['secrets'] => ({
	postgresPassword: secret(),
	ownerPassword: secret(),
	appPassword: secret(),
	authSecret: secret(),
	trailMacKey: randomBytes(32).toString('base64url'),
	bidFileKeys: bidFileKey()
});

/**
 * Secrets of the start command's data, kept beside it so a second start reuses the cluster and sessions.
 * A file from before a secret existed gets that secret added.
 */
function keptSecrets(dataRoot: string): StackPlan['secrets'] {
	const file = join(dataRoot, 'secrets.json');
	const kept = existsSync(file)
		? (JSON.parse(readFileSync(file, 'utf8')) as Partial<StackPlan['secrets']>)
		: undefined;
	const secrets = { ...freshSecrets(), ...kept };
	if (!kept || Object.keys(secrets).some((k) => !(k in kept))) {
		mkdirSync(dataRoot, { recursive: true });
		writeFileSync(file, JSON.stringify(secrets, null, 2), { mode: 0o600 });
	}
	return secrets;
}

const envPort = (name: string, fallback: number) => Number(process.env[name] ?? fallback);

export function startPlan(root: string): StackPlan {
	// TENDERLOOM_DATA_DIR: another folder than .data, for the shutdown test's second stack.
	const dataRoot = process.env.TENDERLOOM_DATA_DIR ?? join(root, '.data');
	return {
		dataRoot,
		throwaway: false,
		ports: {
			app: envPort('PORT', 3000),
			postgres: envPort('PG_PORT', 54329),
			s3: envPort('S3_FAKE_PORT', 9569),
			smtp: envPort('SMTP_FAKE_PORT', 2526),
			mailApi: envPort('MAIL_FAKE_HTTP_PORT', 8026)
		},
		secrets: keptSecrets(dataRoot)
	};
}

export function freePort(): Promise<number> {
	return new Promise((resolve, reject) => {
		const server = createServer();
		server.once('error', reject);
		server.listen(0, '127.0.0.1', () => {
			const address = server.address();
			server.close(() =>
				typeof address === 'object' && address ? resolve(address.port) : reject(new Error('no port'))
			);
		});
	});
}

export async function testPlan(dataRoot: string): Promise<StackPlan> {
	const ports = { app: 0, postgres: 0, s3: 0, smtp: 0, mailApi: 0 };
	const taken = new Set<number>();
	for (const key of Object.keys(ports) as (keyof typeof ports)[]) {
		let port = await freePort();
		while (taken.has(port)) port = await freePort();
		taken.add(port);
		ports[key] = port;
	}
	return { dataRoot, throwaway: true, ports, secrets: freshSecrets() };
}

/** The owner's URL: migrations and seeds only, never handed to the web server or the worker. */
export function migrationDatabaseUrl(plan: StackPlan): string {
	return postgresUrl({ port: plan.ports.postgres, user: OWNER_ROLE, password: plan.secrets.ownerPassword });
}

/** The cluster superuser's URL: the stack and the migration tests (scratch databases) only. */
export function adminDatabaseUrl(plan: StackPlan): string {
	return postgresUrl({ port: plan.ports.postgres, user: PG_USER, password: plan.secrets.postgresPassword });
}

/** The environment the web process, the tests and the scripts get; a real deployment sets the same names. */
export function appEnvironment(plan: StackPlan) {
	const origin = `http://127.0.0.1:${plan.ports.app}`;
	return {
		DATABASE_URL: postgresUrl({
			port: plan.ports.postgres,
			user: APP_ROLE,
			password: plan.secrets.appPassword
		}),
		AUTH_SECRET: plan.secrets.authSecret,
		TRAIL_MAC_KEY: plan.secrets.trailMacKey,
		AUTH_TRUST_HOST: 'true',
		ORIGIN: origin,
		HOST: '127.0.0.1',
		PORT: String(plan.ports.app),
		S3_ENDPOINT: `http://127.0.0.1:${plan.ports.s3}`,
		S3_REGION: 'us-east-1',
		S3_BUCKET: 'tenderloom',
		// s3rver accepts exactly this key pair.
		S3_ACCESS_KEY_ID: 'S3RVER',
		S3_SECRET_ACCESS_KEY: 'S3RVER',
		S3_FORCE_PATH_STYLE: 'true',
		BID_FILE_KEYS: plan.secrets.bidFileKeys,
		// s3rver accepts the header and ignores it: set so the request a real S3 gets is exercised.
		S3_SERVER_SIDE_ENCRYPTION: 'AES256',
		SMTP_URL: `smtp://127.0.0.1:${plan.ports.smtp}`,
		MAIL_FROM: 'Tenderloom <no-reply@tenderloom.test>',
		MAIL_FAKE_API: `http://127.0.0.1:${plan.ports.mailApi}`
	} satisfies Record<string, string>;
}

export type AppEnvironment = ReturnType<typeof appEnvironment>;
