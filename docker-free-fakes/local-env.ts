// The addresses and secrets of a local stack: fixed ports and kept secrets for `npm start`,
// free ports and fresh secrets for `npm test`.
import { randomBytes } from 'node:crypto';
import { existsSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { createServer } from 'node:net';
import { join } from 'node:path';
import { postgresUrl } from './postgres';

export interface StackPlan {
	dataRoot: string;
	throwaway: boolean;
	ports: { app: number; postgres: number; s3: number; smtp: number; mailApi: number };
	secrets: { postgresPassword: string; authSecret: string; bidFileKeys: string };
}

const secret = () => randomBytes(24).toString('base64url');
/** The master key that encrypts bid files (BID_FILE_KEYS), named by the day it was made. */
const bidFileKey = () =>
	`local${new Date().toISOString().slice(0, 10).replace(/-/g, '')}:${randomBytes(32).toString('base64')}`;

/** Secrets of the start command's data, kept beside it so a second start reuses the cluster and sessions. */
function keptSecrets(dataRoot: string): StackPlan['secrets'] {
	const file = join(dataRoot, 'secrets.json');
	if (existsSync(file)) {
		const kept = JSON.parse(readFileSync(file, 'utf8')) as StackPlan['secrets'];
		if (kept.bidFileKeys) return kept;
		// Data made before bid files were encrypted: add a key and keep it from now on.
		const completed = { ...kept, bidFileKeys: bidFileKey() };
		writeFileSync(file, JSON.stringify(completed, null, 2), { mode: 0o600 });
		return completed;
	}
	mkdirSync(dataRoot, { recursive: true });
	const fresh = { postgresPassword: secret(), authSecret: secret(), bidFileKeys: bidFileKey() };
	writeFileSync(file, JSON.stringify(fresh, null, 2), { mode: 0o600 });
	return fresh;
}

const envPort = (name: string, fallback: number) => Number(process.env[name] ?? fallback);

export function startPlan(root: string): StackPlan {
	const dataRoot = join(root, '.data');
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
	return {
		dataRoot,
		throwaway: true,
		ports,
		secrets: { postgresPassword: secret(), authSecret: secret(), bidFileKeys: bidFileKey() }
	};
}

/** The environment the web process, the tests and the scripts get; a real deployment sets the same names. */
export function appEnvironment(plan: StackPlan) {
	const origin = `http://127.0.0.1:${plan.ports.app}`;
	return {
		DATABASE_URL: postgresUrl({ port: plan.ports.postgres, password: plan.secrets.postgresPassword }),
		AUTH_SECRET: plan.secrets.authSecret,
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
