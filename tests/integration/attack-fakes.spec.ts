// Finding 6 of issue 9: the S3 fake listed and served every bid file to anyone, and /dev/mailbox (every
// sign-in link) was guarded only by a setting that a production build accepted too.
import { spawn } from 'node:child_process';
import { existsSync } from 'node:fs';
import { connect } from 'node:net';
import { networkInterfaces } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { freePort } from '../../docker-free-fakes/local-env';
import { deleteObject, getObject, putObject } from '../../src/lib/server/storage';
import { unique } from '../support/factories';

const endpoint = () => process.env.S3_ENDPOINT!;
const bucket = () => process.env.S3_BUCKET ?? 'tenderloom';
const key = `bids/${unique('sealed')}.xlsx`;

afterAll(() => deleteObject(key));

describe('the S3 fake', () => {
	it('refuses to list the bucket to an anonymous request', async () => {
		await putObject(key, Buffer.from('IT-1,4.00'), 'text/csv');
		const response = await fetch(`${endpoint()}/${bucket()}?list-type=2`);
		expect(response.status).toBe(403);
		expect(await response.text()).not.toContain(key);
	});

	it('refuses to hand a bid file to an anonymous request', async () => {
		const response = await fetch(`${endpoint()}/${bucket()}/${key}`);
		expect(response.status).toBe(403);
		expect(await response.text()).not.toContain('IT-1,4.00');
	});

	it('refuses a request with a made-up signature', async () => {
		const date = new Date().toISOString().replace(/[-:]|\.\d{3}/g, '');
		const forged = await fetch(`${endpoint()}/${bucket()}/${key}`, {
			headers: {
				authorization: `AWS4-HMAC-SHA256 Credential=S3RVER/${date.slice(0, 8)}/us-east-1/s3/aws4_request, SignedHeaders=host;x-amz-content-sha256;x-amz-date, Signature=${'ab'.repeat(32)}`,
				'x-amz-content-sha256': 'UNSIGNED-PAYLOAD',
				'x-amz-date': date
			}
		});
		expect(forged.status).toBe(403);
		const presigned = await fetch(
			`${endpoint()}/${bucket()}/${key}?X-Amz-Algorithm=AWS4-HMAC-SHA256&X-Amz-Credential=S3RVER%2F${date.slice(0, 8)}%2Fus-east-1%2Fs3%2Faws4_request&X-Amz-Date=${date}&X-Amz-Expires=900&X-Amz-SignedHeaders=host&X-Amz-Signature=${'cd'.repeat(32)}`
		);
		expect(presigned.status).toBe(403);
	});

	it('serves the app’s signed client', async () => {
		expect((await getObject(key)).toString()).toBe('IT-1,4.00');
	});

	it('listens on the loopback address only', async () => {
		const port = Number(new URL(endpoint()).port);
		const outside = Object.values(networkInterfaces())
			.flat()
			.find((a) => a && a.family === 'IPv4' && !a.internal)?.address;
		if (!outside) return; // a machine with loopback only has nothing else to listen on
		const reached = await new Promise<boolean>((resolve) => {
			const socket = connect({ host: outside, port });
			socket.once('connect', () => resolve(socket.destroy() && true));
			socket.once('error', () => resolve(false));
		});
		expect(reached).toBe(false);
	});
});

/** Starts a process and waits for it to exit; one still running after the timeout is stopped and reported as null. */
function exitOf(args: string[], env: NodeJS.ProcessEnv, timeoutMs = 30_000) {
	return new Promise<{ code: number | null; output: string }>((resolve) => {
		const child = spawn(process.execPath, args, { env, stdio: ['pipe', 'pipe', 'pipe'] });
		let output = '';
		child.stdout.on('data', (chunk: Buffer) => (output += chunk.toString()));
		child.stderr.on('data', (chunk: Buffer) => (output += chunk.toString()));
		const timer = setTimeout(() => child.kill('SIGKILL'), timeoutMs);
		child.once('exit', (code) => {
			clearTimeout(timer);
			resolve({ code, output });
		});
	});
}

describe('the local fakes in production', () => {
	const build = join(process.cwd(), 'build', 'index.js');

	it.runIf(existsSync(build))(
		'keeps the built server from starting with NODE_ENV=production and the mailbox fake set',
		async () => {
			const port = await freePort();
			const { code, output } = await exitOf([build], {
				...process.env,
				NODE_ENV: 'production',
				RUN_WORKERS: 'false',
				HOST: '127.0.0.1',
				PORT: String(port),
				ORIGIN: `http://127.0.0.1:${port}`
			});
			expect(code).not.toBe(0);
			expect(code).not.toBeNull();
			expect(output).toContain('MAIL_FAKE_API');
			expect(output).toContain('NODE_ENV=production');
		},
		40_000
	);

	it.runIf(existsSync(build))(
		'keeps the built server from starting with the fakes behind a public https origin',
		async () => {
			const port = await freePort();
			const { code, output } = await exitOf([build], {
				...process.env,
				NODE_ENV: 'test',
				RUN_WORKERS: 'false',
				HOST: '127.0.0.1',
				PORT: String(port),
				ORIGIN: 'https://tenders.example.test'
			});
			expect(code).not.toBe(0);
			expect(code).not.toBeNull();
			expect(output).toContain('loopback');
		},
		40_000
	);

	it('keeps a worker process from starting with NODE_ENV=production and the fakes set', async () => {
		const { code, output } = await exitOf(['--import', 'tsx', join(process.cwd(), 'src', 'worker.ts')], {
			...process.env,
			NODE_ENV: 'production'
		});
		expect(code).not.toBe(0);
		expect(code).not.toBeNull();
		expect(output).toContain('MAIL_FAKE_API');
	}, 40_000);
});
