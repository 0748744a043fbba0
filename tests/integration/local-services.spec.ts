import { spawn } from 'node:child_process';
import { chmodSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import nodemailer from 'nodemailer';
import pg from 'pg';
import { afterAll, describe, expect, it } from 'vitest';
import { freePort } from '../../docker-free-fakes/local-env';
import {
	chooseDataDir,
	findPostgresBinDir,
	initCluster,
	postgresService,
	postgresUrl
} from '../../docker-free-fakes/postgres';
import { Supervisor, waitForPort } from '../../docker-free-fakes/supervisor';
import { deleteObject, getObject, putObject, storageReachable } from '../../src/lib/server/storage';
import { sendMail } from '../../src/lib/server/mail';
import { latestMailTo } from '../support/mail';
import { unique } from '../support/factories';

const scratch = mkdtempSync(join(tmpdir(), 'tenderloom-services-'));
chmodSync(scratch, 0o755);
afterAll(() => rmSync(scratch, { recursive: true, force: true }));

describe('the S3 fake through @aws-sdk/client-s3', () => {
	it('stores and returns an object byte for byte', async () => {
		expect(await storageReachable()).toBe(true);
		const key = `test/${unique('object')}`;
		const body = Buffer.from([0, 1, 2, 250, 251, 252, 10, 13]);
		await putObject(key, body, 'application/octet-stream', { sha256: 'abc' });
		expect(Buffer.compare(await getObject(key), body)).toBe(0);
		await deleteObject(key);
		await expect(getObject(key)).rejects.toThrow();
	});
});

describe('the SMTP fake', () => {
	it('delivers what the app sends through nodemailer to its mailbox API', async () => {
		const to = `${unique('reader')}@example.test`;
		await sendMail({ to, subject: 'Hello', text: 'Plain words', html: '<p>Plain words</p>' });
		const mail = await latestMailTo(to);
		expect(mail).toMatchObject({
			to: [to],
			subject: 'Hello',
			text: 'Plain words',
			html: '<p>Plain words</p>'
		});
		const one = await fetch(`${process.env.MAIL_FAKE_API}/messages/${mail.id}`);
		expect(await one.json()).toMatchObject({ id: mail.id, subject: 'Hello' });
	});

	it('keeps messages across a restart', async () => {
		const [smtpPort, httpPort] = [await freePort(), await freePort()];
		const directory = join(scratch, 'mail');
		const start = async () => {
			const child = spawn(process.execPath, ['--import', 'tsx', 'docker-free-fakes/smtp-fake.ts'], {
				env: {
					...process.env,
					SMTP_FAKE_PORT: String(smtpPort),
					MAIL_FAKE_HTTP_PORT: String(httpPort),
					SMTP_FAKE_DIR: directory
				},
				stdio: ['pipe', 'ignore', 'inherit']
			});
			await waitForPort(httpPort);
			return child;
		};
		const stop = (child: ReturnType<typeof spawn>) =>
			new Promise<void>((resolve) => {
				child.once('exit', () => resolve());
				child.kill('SIGTERM');
			});
		const first = await start();
		const transport = nodemailer.createTransport(`smtp://127.0.0.1:${smtpPort}`);
		await transport.sendMail({
			from: 'a@example.test',
			to: 'b@example.test',
			subject: 'Kept',
			text: 'still here',
			attachments: [{ filename: 'lines.csv', content: 'a,b' }]
		});
		await stop(first);
		const second = await start();
		const messages = (await (await fetch(`http://127.0.0.1:${httpPort}/messages`)).json()) as {
			subject: string;
			attachments: { filename: string }[];
		}[];
		expect(messages.map((m) => m.subject)).toEqual(['Kept']);
		expect(messages[0]!.attachments.map((a) => a.filename)).toEqual(['lines.csv']);
		await fetch(`http://127.0.0.1:${httpPort}/messages`, { method: 'DELETE' });
		expect(await (await fetch(`http://127.0.0.1:${httpPort}/messages`)).json()).toEqual([]);
		await stop(second);
	});
});

describe('PostgreSQL from the Debian packages', () => {
	it('reuses the data of its folder when started again', async () => {
		const binDir = findPostgresBinDir();
		expect(binDir, 'the postgresql package is installed by npm test').not.toBeNull();
		const dataDir = chooseDataDir(join(scratch, 'pg'), scratch);
		const plan = {
			binDir: binDir!,
			dataDir,
			port: await freePort(),
			password: 'scratch-password',
			ownerPassword: 'scratch-owner-password',
			appPassword: 'scratch-app-password',
			logFile: join(scratch, 'pg.log'),
			throwaway: true
		};
		expect(initCluster(plan.binDir, dataDir, plan.password)).toBe(true);
		const supervisor = new Supervisor(() => undefined);
		const query = async (sql: string) => {
			const client = new pg.Client({ connectionString: postgresUrl(plan) });
			await client.connect();
			try {
				return await client.query(sql);
			} finally {
				await client.end();
			}
		};
		await supervisor.start(postgresService(plan));
		await query(`create table kept (word text); insert into kept values ('loom')`);
		await supervisor.stopAll();

		expect(initCluster(plan.binDir, dataDir, plan.password)).toBe(false);
		const again = new Supervisor(() => undefined);
		await again.start(postgresService(plan));
		expect((await query('select word from kept')).rows).toEqual([{ word: 'loom' }]);
		await again.stopAll();
	});
});
