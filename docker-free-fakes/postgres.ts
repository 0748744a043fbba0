// PostgreSQL from Debian's packages, run by the project on loopback in a folder of its own.
import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { chmodSync, existsSync, mkdirSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { basename, join } from 'node:path';
import pg from 'pg';
import { waitFor, type ServiceSpec } from './supervisor';

/** The cluster's superuser (initdb): creates the database and the roles below, and nothing else. */
export const PG_USER = 'tenderloom';
export const PG_DATABASE = 'tenderloom';
/** Owns the database and its tables; migrations and seeds run as this role. */
export const OWNER_ROLE = 'tenderloom_owner';
/**
 * The web server and the worker connect as this role: no superuser, owns nothing, INSERT and SELECT only
 * on the decision trail (migrations/20261203040000_app_role_and_signed_trail.ts grants the rest).
 */
export const APP_ROLE = 'tenderloom_app';

const isRoot = process.getuid?.() === 0;

export function findPostgresBinDir(): string | null {
	const override = process.env.PG_BIN_DIR;
	if (override) return existsSync(join(override, 'postgres')) ? override : null;
	const base = '/usr/lib/postgresql';
	if (!existsSync(base)) return null;
	const versions = readdirSync(base)
		.filter((v) => existsSync(join(base, v, 'bin', 'postgres')) && existsSync(join(base, v, 'bin', 'initdb')))
		.sort((a, b) => Number(b) - Number(a));
	return versions[0] ? join(base, versions[0], 'bin') : null;
}

/** Finds the server binaries, installing Debian's `postgresql` when they are missing and we are root. */
export function ensurePostgresInstalled(say: (line: string) => void): string {
	const found = findPostgresBinDir();
	if (found) return found;
	if (!isRoot) {
		throw new Error(
			'PostgreSQL server not found: install the Debian package "postgresql" (apt-get install postgresql)'
		);
	}
	say('installing PostgreSQL from Debian packages (apt-get install postgresql)…');
	const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' };
	for (const args of [
		['update', '-qq'],
		['install', '-y', '-qq', 'postgresql']
	]) {
		const result = spawnSync('apt-get', args, { stdio: 'inherit', env });
		if (result.status !== 0) throw new Error(`apt-get ${args.join(' ')} failed`);
	}
	const installed = findPostgresBinDir();
	if (!installed)
		throw new Error('apt-get installed postgresql but its binaries were not found under /usr/lib/postgresql');
	return installed;
}

/** initdb and postgres refuse to run as root; as root we drop to the `postgres` user. */
function asServerUser(command: string[]): string[] {
	return isRoot
		? ['setpriv', '--reuid=postgres', '--regid=postgres', '--init-groups', '--', ...command]
		: command;
}

function run(command: string[], what: string): void {
	const [file, ...args] = command;
	const result = spawnSync(file!, args, { cwd: '/', encoding: 'utf8' });
	if (result.status !== 0) throw new Error(`${what} failed: ${(result.stderr || result.stdout).trim()}`);
}

function ensureServerUser(): void {
	if (!isRoot) return;
	if (spawnSync('id', ['-u', 'postgres']).status === 0) return;
	run(
		['useradd', '--system', '--no-create-home', '--shell', '/usr/sbin/nologin', 'postgres'],
		'useradd postgres'
	);
}

function serverUserCanUse(dir: string): boolean {
	const [file, ...args] = asServerUser(['test', '-r', dir, '-a', '-w', dir, '-a', '-x', dir]);
	return spawnSync(file!, args, { cwd: '/' }).status === 0;
}

function prepareDir(dir: string): void {
	mkdirSync(dir, { recursive: true });
	if (isRoot) run(['chown', 'postgres:postgres', dir], `chown ${dir}`);
	chmodSync(dir, 0o700);
}

/**
 * The cluster's folder: the preferred one when the server user can reach it, else a stable folder
 * under /tmp (a checkout under a 0700 home is not traversable by `postgres`).
 */
export function chooseDataDir(preferred: string, projectRoot: string): string {
	ensureServerUser();
	prepareDir(preferred);
	if (serverUserCanUse(preferred)) return preferred;
	const tag = createHash('sha1').update(projectRoot).digest('hex').slice(0, 10);
	const fallback = join('/tmp', `tenderloom-pg-${tag}`, basename(preferred));
	mkdirSync(join('/tmp', `tenderloom-pg-${tag}`), { recursive: true, mode: 0o755 });
	prepareDir(fallback);
	return fallback;
}

export function initCluster(binDir: string, dataDir: string, password: string): boolean {
	if (existsSync(join(dataDir, 'PG_VERSION'))) return false;
	const pwfile = join(dataDir, '..', `.pwfile-${process.pid}`);
	writeFileSync(pwfile, `${password}\n`, { mode: 0o600 });
	try {
		if (isRoot) run(['chown', 'postgres:postgres', pwfile], 'chown pwfile');
		run(
			asServerUser([
				join(binDir, 'initdb'),
				'-D',
				dataDir,
				'-U',
				PG_USER,
				'--pwfile',
				pwfile,
				'--auth-host=scram-sha-256',
				'--auth-local=scram-sha-256',
				'-E',
				'UTF8',
				'--no-locale'
			]),
			'initdb'
		);
	} finally {
		rmSync(pwfile, { force: true });
	}
	return true;
}

/** A server left running by an earlier run that was killed holds the folder's lock: stop it first. */
export function stopLeftoverServer(binDir: string, dataDir: string): void {
	const pidFile = join(dataDir, 'postmaster.pid');
	if (!existsSync(pidFile)) return;
	const pid = Number(readFileSync(pidFile, 'utf8').split('\n')[0]);
	if (!pid) return;
	try {
		process.kill(pid, 0);
	} catch {
		return;
	}
	run(
		asServerUser([join(binDir, 'pg_ctl'), 'stop', '-D', dataDir, '-m', 'fast', '-w']),
		'stopping a leftover PostgreSQL'
	);
}

export interface PostgresPlan {
	binDir: string;
	dataDir: string;
	port: number;
	password: string;
	ownerPassword: string;
	appPassword: string;
	logFile: string;
	/** Throwaway clusters skip durability for speed; never for the start command's data. */
	throwaway: boolean;
}

export function postgresUrl(
	plan: Pick<PostgresPlan, 'port' | 'password'> & { user?: string },
	database = PG_DATABASE
): string {
	return `postgres://${plan.user ?? PG_USER}:${encodeURIComponent(plan.password)}@127.0.0.1:${plan.port}/${database}`;
}

export function postgresService(plan: PostgresPlan): ServiceSpec {
	const settings = [
		'-c',
		'listen_addresses=127.0.0.1',
		'-p',
		String(plan.port),
		'-c',
		'unix_socket_directories=',
		...(plan.throwaway
			? ['-c', 'fsync=off', '-c', 'synchronous_commit=off', '-c', 'full_page_writes=off']
			: [])
	];
	const [command, ...args] = asServerUser([join(plan.binDir, 'postgres'), '-D', plan.dataDir, ...settings]);
	return {
		name: 'postgresql',
		command: command!,
		args,
		cwd: '/',
		logFile: plan.logFile,
		stopSignal: 'SIGINT',
		ready: async () => {
			await waitFor(async () => {
				const client = new pg.Client({ connectionString: postgresUrl(plan, 'postgres') });
				try {
					await client.connect();
					await client.query('select 1');
					return true;
				} finally {
					await client.end().catch(() => undefined);
				}
			}, `PostgreSQL on 127.0.0.1:${plan.port}`);
			await ensureDatabase(plan);
		}
	};
}

async function withClient(url: string, work: (client: pg.Client) => Promise<void>): Promise<void> {
	const client = new pg.Client({ connectionString: url });
	await client.connect();
	try {
		await work(client);
	} finally {
		await client.end();
	}
}

/**
 * The owner and the app role (passwords set on every start, so they follow secrets.json), and the
 * database owned by the owner. A cluster made before the two roles had everything owned by the
 * superuser: its tables, functions and types are handed to the owner.
 */
async function ensureDatabase(plan: PostgresPlan): Promise<void> {
	await withClient(postgresUrl(plan, 'postgres'), async (client) => {
		for (const [role, password, extra] of [
			[OWNER_ROLE, plan.ownerPassword, ''],
			[APP_ROLE, plan.appPassword, ' noinherit']
		] as const) {
			const found = await client.query('select 1 from pg_roles where rolname = $1', [role]);
			await client.query(
				`${found.rowCount ? 'alter' : 'create'} role ${role} login nosuperuser nocreatedb nocreaterole noreplication nobypassrls${extra} password ${client.escapeLiteral(password)}`
			);
		}
		const found = await client.query('select 1 from pg_database where datname = $1', [PG_DATABASE]);
		if (found.rowCount === 0) await client.query(`create database ${PG_DATABASE} owner ${OWNER_ROLE}`);
		else await client.query(`alter database ${PG_DATABASE} owner to ${OWNER_ROLE}`);
	});
	await withClient(postgresUrl(plan), async (client) => {
		await client.query(`
			do $$
			declare
				owner oid := (select oid from pg_roles where rolname = '${OWNER_ROLE}');
				r record;
			begin
				for r in
					select c.oid::regclass as name from pg_class c join pg_namespace n on n.oid = c.relnamespace
					where n.nspname in ('public', 'pgboss') and c.relkind in ('r', 'p', 'v', 'm', 'S')
						and c.relowner <> owner
						and not exists (select 1 from pg_depend d where d.classid = 'pg_class'::regclass
							and d.objid = c.oid and (d.deptype = 'e' or (c.relkind = 'S' and d.deptype in ('a', 'i'))))
				loop
					execute format('alter table %s owner to ${OWNER_ROLE}', r.name);
				end loop;
				for r in
					select p.oid::regprocedure as name from pg_proc p join pg_namespace n on n.oid = p.pronamespace
					where n.nspname in ('public', 'pgboss') and p.proowner <> owner
						and not exists (select 1 from pg_depend d where d.classid = 'pg_proc'::regclass
							and d.objid = p.oid and d.deptype = 'e')
				loop
					execute format('alter function %s owner to ${OWNER_ROLE}', r.name);
				end loop;
				for r in
					select t.oid::regtype as name from pg_type t join pg_namespace n on n.oid = t.typnamespace
					where n.nspname in ('public', 'pgboss') and t.typtype in ('e', 'd') and t.typowner <> owner
				loop
					execute format('alter type %s owner to ${OWNER_ROLE}', r.name);
				end loop;
				if exists (select 1 from pg_namespace where nspname = 'pgboss' and nspowner <> owner) then
					alter schema pgboss owner to ${OWNER_ROLE};
				end if;
			end $$;
		`);
	});
}
