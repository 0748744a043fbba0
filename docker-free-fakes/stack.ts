// The two commands of the README. `start`: the local services, migrations, the demo data, a build and
// the web server, until Ctrl-C. `test`: the same on throwaway ports and folders, then type checks,
// lint, unit, integration and browser tests; it stops everything it started. `fakes`: only the
// services, for `npm run dev`.
import { spawn, spawnSync } from 'node:child_process';
import { chmodSync, existsSync, mkdtempSync, readFileSync, rmSync, statSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import {
	adminDatabaseUrl,
	appEnvironment,
	migrationDatabaseUrl,
	startPlan,
	testPlan,
	type AppEnvironment,
	type StackPlan
} from './local-env';
import {
	chooseDataDir,
	ensurePostgresInstalled,
	initCluster,
	postgresService,
	stopLeftoverServer
} from './postgres';
import { exitWithParent, Supervisor, waitFor, waitForPort } from './supervisor';
import { migrateDatabase, seedDatabase } from './db';
import { demoAccounts, DEMO_PASSWORD } from '../seeds/data/demo-accounts';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const say = (line: string) => console.log(`[tenderloom] ${line}`);
const tsxNode = (script: string) => ({
	command: process.execPath,
	args: ['--import', 'tsx', join(root, script)]
});

/** Where the stack keeps its record of pids and its hold files (docker-free-fakes/supervisor.ts). */
const controlDir = (plan: StackPlan) => join(plan.dataRoot, 'run');

/** What the outage and shutdown tests need to know of the stack that runs them (never the app). */
const stackFacts = { pgDataDir: '', pgBinDir: '' };

async function startServices(plan: StackPlan, supervisor: Supervisor): Promise<AppEnvironment> {
	const env = appEnvironment(plan);
	const binDir = ensurePostgresInstalled(say);
	const dataDir = chooseDataDir(join(plan.dataRoot, 'pg'), root);
	Object.assign(stackFacts, { pgDataDir: dataDir, pgBinDir: binDir });
	if (initCluster(binDir, dataDir, plan.secrets.postgresPassword))
		say(`created a PostgreSQL cluster in ${dataDir}`);
	else say(`reusing the PostgreSQL cluster in ${dataDir}`);
	stopLeftoverServer(binDir, dataDir);
	const logs = join(plan.dataRoot, 'logs');
	await supervisor.start(
		postgresService({
			binDir,
			dataDir,
			port: plan.ports.postgres,
			password: plan.secrets.postgresPassword,
			ownerPassword: plan.secrets.ownerPassword,
			appPassword: plan.secrets.appPassword,
			logFile: join(logs, 'postgresql.log'),
			throwaway: plan.throwaway
		})
	);
	say(`PostgreSQL on 127.0.0.1:${plan.ports.postgres}`);
	await supervisor.start({
		name: 's3-fake',
		...tsxNode('docker-free-fakes/s3-fake.ts'),
		env: {
			...process.env,
			S3_FAKE_PORT: String(plan.ports.s3),
			S3_FAKE_DIR: join(plan.dataRoot, 's3'),
			S3_BUCKET: env.S3_BUCKET
		},
		logFile: join(logs, 's3-fake.log'),
		ready: () => waitForPort(plan.ports.s3)
	});
	say(`S3 fake on ${env.S3_ENDPOINT}`);
	await supervisor.start({
		name: 'smtp-fake',
		...tsxNode('docker-free-fakes/smtp-fake.ts'),
		env: {
			...process.env,
			SMTP_FAKE_PORT: String(plan.ports.smtp),
			MAIL_FAKE_HTTP_PORT: String(plan.ports.mailApi),
			SMTP_FAKE_DIR: join(plan.dataRoot, 'mail')
		},
		logFile: join(logs, 'smtp-fake.log'),
		ready: async () => {
			await waitForPort(plan.ports.smtp);
			await waitForPort(plan.ports.mailApi);
		}
	});
	say(`SMTP fake on ${env.SMTP_URL}, its mailbox API on ${env.MAIL_FAKE_API}`);
	return env;
}

// The app refuses the local fakes under NODE_ENV=production (src/lib/server/config.ts); the built server
// behaves the same otherwise, since the build fixed SvelteKit's and Svelte's production mode.
const localNodeEnv = (plan: StackPlan) => (plan.throwaway ? 'test' : 'development');

/** One worker process (`npm run worker`): award runs, notices, closing events and mail from the queues. */
async function startWorkerProcess(
	plan: StackPlan,
	supervisor: Supervisor,
	env: AppEnvironment & Record<string, string>
): Promise<void> {
	const logFile = join(plan.dataRoot, 'logs', 'worker.log');
	const from = existsSync(logFile) ? statSync(logFile).size : 0;
	await supervisor.start({
		name: 'worker',
		command: process.execPath,
		args: ['--import', 'tsx', join(root, 'src', 'worker.ts')],
		cwd: root,
		env: { ...process.env, ...env, NODE_ENV: localNodeEnv(plan), EXIT_WITH_PARENT: '1' },
		logFile,
		echo: !plan.throwaway,
		ready: () =>
			waitFor(
				async () => existsSync(logFile) && readFileSync(logFile, 'utf8').slice(from).includes('taking jobs'),
				'the worker process',
				60_000
			)
	});
}

async function startWeb(
	plan: StackPlan,
	supervisor: Supervisor,
	env: AppEnvironment & Record<string, string>
): Promise<void> {
	await supervisor.start({
		name: 'web',
		command: process.execPath,
		args: [join(root, 'serve.js')],
		// adapter-node refuses request bodies over 512 kB by default; bid sheets may be up to 5 MB.
		env: {
			...process.env,
			BODY_SIZE_LIMIT: '6M',
			// In-flight requests get this long to finish once the server stops taking new ones.
			SHUTDOWN_TIMEOUT: '5',
			// Tests watch the health check while a large or hostile file is read: with one web process, the
			// process reading the file is the one that must keep answering (web-processes.spec.ts starts
			// its own server with two). `npm start` runs one per core (serve.js).
			...(plan.throwaway && !process.env.WEB_PROCESSES ? { WEB_PROCESSES: '1' } : {}),
			...env,
			NODE_ENV: localNodeEnv(plan),
			EXIT_WITH_PARENT: '1'
		},
		logFile: join(plan.dataRoot, 'logs', 'web.log'),
		echo: !plan.throwaway,
		ready: () =>
			waitFor(
				async () => (await fetch(`${env.ORIGIN}/healthz`)).ok,
				`the web server on ${env.ORIGIN}`,
				60_000
			)
	});
}

/**
 * Migrations and seeds run as the owner. The seeds append to the decision trail, which signs entries and
 * writes checkpoints with the app's settings, so this process takes the app's environment first.
 */
async function migrateAndSeed(plan: StackPlan, env: AppEnvironment): Promise<void> {
	await migrateDatabase(migrationDatabaseUrl(plan));
	Object.assign(process.env, env);
	await seedDatabase(migrationDatabaseUrl(plan));
}

/** The test or check steps running now, stopped with the stack when it is told to stop. */
const currentSteps = new Set<ReturnType<typeof spawn>>();

/**
 * Runs one step to its end. With `buffered`, its output is held and printed in one piece when it ends, so
 * that two steps running side by side do not interleave their lines.
 */
function runStep(
	command: string,
	args: string[],
	env: NodeJS.ProcessEnv = process.env,
	{ buffered = false }: { buffered?: boolean } = {}
): Promise<number> {
	return new Promise((resolve) => {
		const child = spawn(command, args, {
			cwd: root,
			env,
			stdio: buffered ? ['ignore', 'pipe', 'pipe'] : 'inherit'
		});
		const output: Buffer[] = [];
		child.stdout?.on('data', (chunk: Buffer) => output.push(chunk));
		child.stderr?.on('data', (chunk: Buffer) => output.push(chunk));
		currentSteps.add(child);
		child.on('close', (code) => {
			currentSteps.delete(child);
			if (buffered && output.length) process.stdout.write(Buffer.concat(output));
			resolve(code ?? 1);
		});
	});
}

function build(): void {
	// For the shutdown test, which starts a second stack beside the one that already built the app.
	if (process.env.TENDERLOOM_SKIP_BUILD === '1' && existsSync(join(root, 'build', 'index.js'))) return;
	say('building the app (vite build)…');
	const result = spawnSync('npx', ['vite', 'build', '--logLevel', 'error'], { cwd: root, stdio: 'inherit' });
	if (result.status !== 0) throw new Error('vite build failed');
}

/**
 * Ctrl-C (SIGINT to the terminal's whole foreground group), SIGTERM or SIGHUP, or the death of the process
 * that started this one (npm does not pass SIGTERM on to its script's children): stop web and worker, then
 * the fakes, then PostgreSQL (the supervisor stops them in the reverse order of their start; they sit in
 * process groups of their own, so a terminal's signal reaches them only through here).
 */
function onShutdown(stop: () => Promise<void>): void {
	let stopping = false;
	const shutdown = (why: string) => {
		if (stopping) return;
		stopping = true;
		say(`${why}: stopping everything`);
		for (const step of currentSteps) step.kill('SIGTERM');
		stop().then(
			() => process.exit(0),
			(error: unknown) => {
				console.error(`[tenderloom] stopping failed: ${(error as Error).message}`);
				process.exit(1);
			}
		);
	};
	for (const signal of ['SIGINT', 'SIGTERM', 'SIGHUP'] as const) process.on(signal, () => shutdown(signal));
	exitWithParent(() => shutdown('the process that started the stack is gone'));
}

async function assertPortsFree(plan: StackPlan): Promise<string[]> {
	const bound: string[] = [];
	for (const [name, port] of Object.entries(plan.ports)) {
		const free = await new Promise<boolean>((resolve) => {
			const server = createServer();
			server.once('error', () => resolve(false));
			server.listen(port, '127.0.0.1', () => server.close(() => resolve(true)));
		});
		if (!free) bound.push(`${name} (${port})`);
	}
	return bound;
}

async function start(): Promise<void> {
	const plan = startPlan(root);
	const supervisor = new Supervisor(say, { controlDir: controlDir(plan) });
	onShutdown(() => supervisor.stopAll());
	try {
		const env = await startServices(plan, supervisor);
		await migrateAndSeed(plan, env);
		say('migrated and loaded the demo scenario');
		build();
		await startWeb(plan, supervisor, env);
		await startWorkerProcess(plan, supervisor, env);
		console.log(
			[
				'',
				`  Tenderloom is running at ${env.ORIGIN}`,
				'',
				'  Demo sign-ins (an invented scenario; staff sign in by password, suppliers by e-mail link):',
				...demoAccounts.map(
					(a) => `    ${a.role.padEnd(9)} ${a.email.padEnd(36)} ${a.password ? DEMO_PASSWORD : 'e-mail link'}`
				),
				`  Sign-in links and notices land in the local mailbox: ${env.ORIGIN}/dev/mailbox`,
				'',
				'  Ctrl-C stops the app and every service it started; the data stays in .data/',
				''
			].join('\n')
		);
	} catch (error) {
		console.error(`[tenderloom] ${(error as Error).message}`);
		await supervisor.stopAll();
		process.exit(1);
	}
}

function ensureChromium(): string {
	const path = process.env.CHROMIUM_PATH ?? '/usr/bin/chromium';
	if (existsSync(path)) return path;
	if (process.getuid?.() !== 0)
		throw new Error(`Chromium not found at ${path}: install the Debian package "chromium"`);
	say('installing Chromium from Debian packages for the browser tests…');
	const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' };
	for (const args of [
		['update', '-qq'],
		['install', '-y', '-qq', 'chromium']
	]) {
		if (spawnSync('apt-get', args, { stdio: 'inherit', env }).status !== 0)
			throw new Error(`apt-get ${args.join(' ')} failed`);
	}
	return path;
}

interface StepResult {
	step: string;
	ok: boolean;
	seconds: number;
}

/**
 * `npm test` runs everything. `npm test -- PATTERN…` (files or names, as vitest takes them) is the quick
 * loop: no type check or lint, only the matching tests, against the same freshly built stack.
 */
async function test(filters: string[]): Promise<void> {
	const dataRoot = mkdtempSync(join(tmpdir(), 'tenderloom-test-'));
	// mkdtemp makes a 0700 folder; the `postgres` user must be able to reach the cluster inside it.
	chmodSync(dataRoot, 0o755);
	const plan = await testPlan(dataRoot);
	const supervisor = new Supervisor(say, { controlDir: controlDir(plan) });
	const results: StepResult[] = [];
	const counts = { passed: 0, failed: 0, skipped: 0 };
	const cleanUp = async () => {
		await supervisor.stopAll();
		rmSync(dataRoot, { recursive: true, force: true });
	};
	onShutdown(cleanUp);
	const timed = async (step: string, work: () => Promise<boolean>) => {
		const began = Date.now();
		say(`── ${step}`);
		let ok = false;
		try {
			ok = await work();
		} catch (error) {
			console.error(`[tenderloom] ${step}: ${(error as Error).message}`);
		}
		results.push({ step, ok, seconds: (Date.now() - began) / 1000 });
		return ok;
	};

	try {
		if (!filters.length) {
			// The type check and the lint each keep one core busy for a minute or so: side by side, after the
			// generated types they both read are written.
			const synced = (await runStep('npx', ['svelte-kit', 'sync'])) === 0;
			await Promise.all([
				timed(
					'type check (svelte-check)',
					async () =>
						synced &&
						(await runStep(
							'npx',
							['svelte-check', '--tsconfig', './tsconfig.json', '--fail-on-warnings'],
							process.env,
							{ buffered: true }
						)) === 0
				),
				timed(
					'lint (prettier, eslint)',
					async () =>
						(await runStep('npm', ['run', '--silent', 'lint'], process.env, { buffered: true })) === 0
				)
			]);
		}
		let env: (AppEnvironment & { CHROMIUM_PATH: string }) | undefined;
		const ready = await timed('services, migrations, build, web server', async () => {
			const chromium = ensureChromium();
			env = { ...(await startServices(plan, supervisor)), CHROMIUM_PATH: chromium };
			await migrateDatabase(migrationDatabaseUrl(plan));
			build();
			// Many tests sign in from 127.0.0.1: lift the per-address ceiling for the server under test only
			// (tests/integration/rate-limit.spec.ts checks that ceiling on its own).
			// The browser tests move the server's clock past a deadline through this file (src/lib/server/clock.ts).
			await startWeb(plan, supervisor, {
				...env,
				SIGN_IN_LIMIT_PER_ADDRESS: '100000',
				CLOCK_OFFSET_FILE: join(dataRoot, 'clock.json')
			});
			await startWorkerProcess(plan, supervisor, { ...env, CLOCK_OFFSET_FILE: join(dataRoot, 'clock.json') });
			return true;
		});
		if (ready && env) {
			const testEnv = env;
			// Unit and integration tests first; then the browser tests, the ones that move the server's clock,
			// stop PostgreSQL or start a second stack last and one at a time (vite.config.ts).
			const runs = [
				{
					step: 'unit and integration tests (vitest)',
					projects: ['unit', 'integration', 'integration-alone']
				},
				{ step: 'browser tests (vitest, Chromium)', projects: ['e2e', 'e2e-alone'] }
			];
			for (const [k, run] of runs.entries()) {
				const report = join(dataRoot, `vitest-${k}.json`);
				await timed(run.step, async () => {
					const code = await runStep(
						'npx',
						[
							'vitest',
							'run',
							...run.projects.flatMap((p) => ['--project', p]),
							'--reporter=default',
							'--reporter=json',
							`--outputFile.json=${report}`,
							...(filters.length ? ['--passWithNoTests', ...filters] : [])
						],
						{
							...process.env,
							...testEnv,
							APP_URL: testEnv.ORIGIN,
							// Only the tests get these: the attack tests play a database owner, the migration
							// tests make scratch databases. The web server and the worker never see them.
							DATABASE_OWNER_URL: migrationDatabaseUrl(plan),
							DATABASE_ADMIN_URL: adminDatabaseUrl(plan),
							TEST_DATA_DIR: dataRoot,
							CLOCK_OFFSET_FILE: join(dataRoot, 'clock.json'),
							// The outage test stops this stack's PostgreSQL for a while (tests/support/stack.ts).
							STACK_CONTROL_DIR: controlDir(plan),
							PG_DATA_DIR: stackFacts.pgDataDir
						}
					);
					let passed = 0;
					if (existsSync(report)) {
						const json = JSON.parse(readFileSync(report, 'utf8')) as Record<string, number>;
						passed = json.numPassedTests ?? 0;
						counts.passed += passed;
						counts.failed += (json.numFailedTests ?? 0) + (json.numRuntimeErrorTestSuites ?? 0);
						counts.skipped += (json.numPendingTests ?? 0) + (json.numTodoTests ?? 0);
					}
					return code === 0 && (passed > 0 || filters.length > 0);
				});
			}
		}
	} finally {
		await cleanUp();
	}
	const bound = await assertPortsFree(plan);
	results.push({ step: 'nothing left running', ok: bound.length === 0, seconds: 0 });
	if (bound.length) console.error(`[tenderloom] ports still bound after the run: ${bound.join(', ')}`);

	console.log('\n  step                                             result   seconds');
	for (const r of results)
		console.log(`  ${r.step.padEnd(48)} ${(r.ok ? 'ok' : 'FAILED').padEnd(8)} ${r.seconds.toFixed(1)}`);
	const failedSteps = results.filter((r) => !r.ok).length;
	console.log(`\n${counts.passed} passed, ${counts.failed + failedSteps} failed, ${counts.skipped} skipped`);
	process.exit(failedSteps === 0 && counts.failed === 0 ? 0 : 1);
}

async function fakes(): Promise<void> {
	const plan = startPlan(root);
	const supervisor = new Supervisor(say, { controlDir: controlDir(plan) });
	onShutdown(() => supervisor.stopAll());
	const env = await startServices(plan, supervisor);
	await migrateAndSeed(plan, env);
	console.log('\nServices are up. For `npm run dev` in another shell, export:\n');
	for (const [key, value] of Object.entries(env)) console.log(`export ${key}='${value}'`);
	console.log(`export MIGRATION_DATABASE_URL='${migrationDatabaseUrl(plan)}'`);
	console.log('# for the integration tests only, never for the app:');
	console.log(`export DATABASE_OWNER_URL='${migrationDatabaseUrl(plan)}'`);
	console.log(`export DATABASE_ADMIN_URL='${adminDatabaseUrl(plan)}'`);
	console.log("export ORIGIN='http://127.0.0.1:5173'\n");
}

const command = process.argv[2];
const commands: Record<string, (args: string[]) => Promise<void>> = { start, test, fakes };
const run = command ? commands[command] : undefined;
if (!run) {
	console.error(`usage: stack.ts ${Object.keys(commands).join(' | ')}`);
	process.exit(2);
}
await run(process.argv.slice(3));
