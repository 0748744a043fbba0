// `npm run bench:pages`: bounded load on loopback against the stack `npm start` runs, with its demo data
// (seeds/02_demo_events.ts: the closed 300-item event FP-2027-PKG with eight bids). DEVELOPERS.md,
// "Benchmarks", says how to run it and keeps the figures.
//
// Pages, each for BENCH_SECONDS (default 10, after BENCH_WARMUP_SECONDS of the same load, default 3, whose
// figures are dropped) with BENCH_CONNECTIONS (default 50) keep-alive connections sending one request
// after another, signed in as the demo buyer: the events list, the demo event, its
// bids tabulation, the run page of a finished lowest-cost run (one is run first when there is none) and
// GET /api/events. Then 40 uploads at once of a 200-line bid sheet, by 40 suppliers of a bench event
// (organisations "Bench supplier NN" and the event BENCH-…, made as the database owner beside the demo,
// under their own buying organisation so the demo buyer's pages do not change).
//
// Prints a table and writes the figures as JSON to BENCH_OUTPUT (default .data/bench-pages.json).
import { mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { Agent, request } from 'node:http';
import { cpus, totalmem } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import knex, { type Knex } from 'knex';
import { appEnvironment, migrationDatabaseUrl, startPlan } from '../docker-free-fakes/local-env';
import { DEMO_PASSWORD } from '../seeds/data/demo-accounts';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const plan = startPlan(root);
const env = appEnvironment(plan);
const origin = env.ORIGIN;
const CONNECTIONS = Number(process.env.BENCH_CONNECTIONS ?? 50);
const SECONDS = Number(process.env.BENCH_SECONDS ?? 10);
const WARMUP_SECONDS = Number(process.env.BENCH_WARMUP_SECONDS ?? 3);
const UPLOADS = 40;
const UPLOAD_LINES = 200;
const output = process.env.BENCH_OUTPUT ?? join(root, '.data', 'bench-pages.json');

// The test helpers talk to APP_URL and read the local mailbox through MAIL_FAKE_API.
process.env.APP_URL = origin;
process.env.MAIL_FAKE_API = env.MAIL_FAKE_API;
const { Browserless } = await import('../tests/support/http');

interface Sample {
	ms: number;
	bytes: number;
	status: number;
}

const agent = new Agent({ keepAlive: true, maxSockets: CONNECTIONS });

function get(path: string, cookie: string, accept: string): Promise<Sample> {
	const began = performance.now();
	return new Promise((resolve, reject) => {
		const req = request(`${origin}${path}`, { agent, headers: { cookie, accept } }, (res) => {
			let bytes = 0;
			res.on('data', (chunk: Buffer) => (bytes += chunk.length));
			res.on('end', () => resolve({ ms: performance.now() - began, bytes, status: res.statusCode ?? 0 }));
			res.on('error', reject);
		});
		req.on('error', reject);
		req.end();
	});
}

const percentile = (sorted: number[], p: number) =>
	sorted.length ? sorted[Math.min(sorted.length - 1, Math.ceil((p / 100) * sorted.length) - 1)]! : NaN;

interface Figures {
	name: string;
	path: string;
	requests: number;
	errors: number;
	p50: number;
	p95: number;
	max: number;
	bytes: number;
	perSecond: number;
	/** The whole machine's busy CPU time (every process: server, database, this load) per request, in ms. */
	cpuMsPerRequest?: number;
}

function summarise(name: string, path: string, samples: Sample[], seconds: number): Figures {
	const ok = samples.filter((s) => s.status >= 200 && s.status < 300);
	const sorted = ok.map((s) => s.ms).sort((a, b) => a - b);
	return {
		name,
		path,
		requests: samples.length,
		errors: samples.length - ok.length,
		p50: Math.round(percentile(sorted, 50)),
		p95: Math.round(percentile(sorted, 95)),
		max: Math.round(sorted.at(-1) ?? NaN),
		bytes: ok.length ? Math.round(ok.reduce((n, s) => n + s.bytes, 0) / ok.length) : 0,
		perSecond: Math.round((samples.length / seconds) * 10) / 10
	};
}

/** CONNECTIONS loops, each sending the next request when the last one is answered, for `seconds`. */
async function hammer(path: string, cookie: string, accept: string, seconds: number): Promise<Sample[]> {
	const samples: Sample[] = [];
	const until = performance.now() + seconds * 1000;
	await Promise.all(
		Array.from({ length: CONNECTIONS }, async () => {
			while (performance.now() < until) {
				try {
					samples.push(await get(path, cookie, accept));
				} catch {
					samples.push({ ms: Infinity, bytes: 0, status: 0 });
				}
			}
		})
	);
	return samples;
}

/**
 * The page under load for SECONDS, after WARMUP_SECONDS of the same load whose figures are dropped: the
 * first second after a start is the web processes compiling their code and opening their database
 * connections (3 s answers then), which is not the steady state the targets are about.
 */
async function load(name: string, path: string, cookie: string, accept = 'text/html'): Promise<Figures> {
	const first = await get(path, cookie, accept);
	if (first.status !== 200) throw new Error(`${path} answered ${first.status}, not 200`);
	await hammer(path, cookie, accept, WARMUP_SECONDS);
	const began = performance.now();
	const busyBefore = busyMs();
	const samples = await hammer(path, cookie, accept, SECONDS);
	const busy = busyMs();
	const figures = summarise(name, path, samples, (performance.now() - began) / 1000);
	if (busy !== null && busyBefore !== null && samples.length)
		figures.cpuMsPerRequest = Math.round(((busy - busyBefore) / samples.length) * 10) / 10;
	return figures;
}

/**
 * The machine's busy CPU time so far, in ms (Linux /proc/stat, in USER_HZ = 100ths of a second: user, nice, system, irq and softirq of all
 * cores), or null elsewhere. Per request, it tells a change in the work a page costs from a change in how
 * busy a shared machine's other tenants keep it, which moves the latencies by a third between runs.
 */
function busyMs(): number | null {
	try {
		const [, user, nice, system, , , irq, softirq] = readFileSync('/proc/stat', 'utf8')
			.split('\n')[0]!
			.trim()
			.split(/\s+/)
			.map(Number);
		return ((user! + nice! + system! + irq! + softirq!) * 1000) / 100;
	} catch {
		return null;
	}
}

async function cookieOf(client: InstanceType<typeof Browserless>): Promise<string> {
	const session = await client.session();
	if (!session) throw new Error('not signed in');
	// Browserless keeps its jar private; a request made through it carries it, so ask it for the header.
	return (client as unknown as { cookieHeader(): string }).cookieHeader();
}

async function signInBuyer() {
	const client = new Browserless();
	await client.signInWithPassword('buyer@fernhollow.test', DEMO_PASSWORD);
	if (!(await client.session()))
		throw new Error(
			'the demo buyer could not sign in: is `npm start` running, with SIGN_IN_LIMIT_PER_ADDRESS raised (DEVELOPERS.md, "Benchmarks")?'
		);
	return client;
}

/**
 * Waits until the run's explanations (rule costs, sensitivity: a background job after the solve) are
 * finished too, so the worker is idle while the pages are measured and the run page is its final self.
 */
async function explained(owner: Knex, runId: string): Promise<string> {
	for (let k = 0; k < 1200; k++) {
		const run = await owner('award_runs').where({ id: runId }).first('explanation_status');
		if (!['pending', 'running'].includes(run?.explanation_status)) return runId;
		await new Promise((r) => setTimeout(r, 500));
	}
	throw new Error('the demo run was not explained in 10 minutes');
}

async function finishedRun(owner: Knex, buyer: InstanceType<typeof Browserless>, eventId: string) {
	const done = await owner('award_runs')
		.where({ event_id: eventId, status: 'done' })
		.orderBy('number', 'desc')
		.first('id');
	if (done) return explained(owner, done.id as string);
	const plans = (await (await buyer.get(`/api/events/${eventId}/plans`, 'application/json')).json()) as {
		plans: { id: string; lowestCost: boolean }[];
	};
	const lowest = plans.plans.find((p) => p.lowestCost)!;
	const started = await buyer.request(`/api/plans/${lowest.id}/runs`, {
		method: 'POST',
		accept: 'application/json'
	});
	const { runId } = (await started.json()) as { runId: string };
	for (let k = 0; k < 600; k++) {
		const run = (await (await buyer.get(`/api/runs/${runId}`, 'application/json')).json()) as {
			status: string;
		};
		if (run.status === 'done') return explained(owner, runId);
		if (['failed', 'cancelled'].includes(run.status)) throw new Error(`the demo run ${runId} ${run.status}`);
		await new Promise((r) => setTimeout(r, 500));
	}
	throw new Error('the demo run did not finish in 5 minutes');
}

/** 40 bench suppliers (made once), a fresh bench event with 200 items inviting them, each signed in. */
async function benchSuppliers(owner: Knex) {
	const buying =
		(await owner('organisations').where({ kind: 'buyer', name: 'Bench buying organisation' }).first('id')) ??
		(
			await owner('organisations')
				.insert({ name: 'Bench buying organisation', kind: 'buyer' })
				.returning('id')
		)[0];
	const buyer =
		(await owner('users').where({ email: 'bench-buyer@bench.test' }).first('id')) ??
		(
			await owner('users')
				.insert({
					email: 'bench-buyer@bench.test',
					name: 'Bench buyer',
					role: 'buyer',
					organisation_id: buying.id,
					organisation_kind: 'buyer'
				})
				.returning('id')
		)[0];
	const suppliers: { organisationId: string; email: string }[] = [];
	for (let k = 1; k <= UPLOADS; k++) {
		const name = `Bench supplier ${String(k).padStart(2, '0')}`;
		const email = `bench-supplier-${String(k).padStart(2, '0')}@bench.test`;
		const organisation =
			(await owner('organisations').where({ kind: 'supplier', name }).first('id')) ??
			(await owner('organisations').insert({ name, kind: 'supplier' }).returning('id'))[0];
		await owner('users')
			.insert({
				email,
				name,
				role: 'supplier',
				organisation_id: organisation.id,
				organisation_kind: 'supplier',
				emailVerified: owner.fn.now()
			})
			.onConflict('email')
			.ignore();
		suppliers.push({ organisationId: organisation.id, email });
	}
	const reference = `BENCH-${Date.now()}`;
	const [event] = await owner('events')
		.insert({
			organisation_id: buying.id,
			reference,
			title: 'Bench event',
			currency: 'EUR',
			incoterm: 'DAP',
			delivery_place: 'Bench',
			deadline: new Date(Date.now() + 24 * 3600_000),
			time_zone: 'Europe/Berlin',
			state: 'open',
			published_at: new Date(),
			created_by: buyer.id
		})
		.returning('id');
	const [lot] = await owner('lots').insert({ event_id: event.id, ref: 'L1', title: 'Lot 1' }).returning('id');
	await owner('items').insert(
		Array.from({ length: UPLOAD_LINES }, (_, k) => ({
			event_id: event.id,
			lot_id: lot.id,
			ref: `B-${k + 1}`,
			description: `Bench item ${k + 1}`,
			quantity: 100,
			unit: 'C62',
			position: k
		}))
	);
	await owner('invitations').insert(
		suppliers.map((s) => ({
			event_id: event.id,
			supplier_organisation_id: s.organisationId,
			invited_by: buyer.id
		}))
	);
	// Five sign-in links per address in 15 minutes (auth/rate-limit.ts): a second bench within that window
	// would find its suppliers' links refused. These addresses are the bench's own.
	await owner('sign_in_limits')
		.whereIn(
			'key',
			suppliers.map((s) => `linksPerEmail:${s.email.toLowerCase()}`)
		)
		.delete();
	const clients = [];
	for (const supplier of suppliers) {
		const client = new Browserless();
		await client.signInByEmailLink(supplier.email);
		if (!(await client.session()))
			throw new Error(`${supplier.email} could not sign in (SIGN_IN_LIMIT_PER_ADDRESS?)`);
		clients.push(client);
	}
	return { eventId: event.id as string, clients };
}

function bidSheet(): Buffer {
	const lines = ['Item ref,Description,Lot,Unit,Quantity,Unit price (EUR)'];
	for (let k = 1; k <= UPLOAD_LINES; k++)
		lines.push(`B-${k},Bench item ${k},L1,C62,100,${(1 + (k % 97) / 10).toFixed(2)}`);
	return Buffer.from(lines.join('\r\n'));
}

async function uploadsAtOnce(owner: Knex): Promise<Figures> {
	const { eventId, clients } = await benchSuppliers(owner);
	const sheet = bidSheet();
	const began = performance.now();
	const samples = await Promise.all(
		clients.map(async (client) => {
			const form = new FormData();
			form.append('file', new Blob([new Uint8Array(sheet)]), 'bid.csv');
			const start = performance.now();
			const response = await client.request(`/api/events/${eventId}/bids`, {
				method: 'POST',
				body: form,
				accept: 'application/json'
			});
			const body = await response.text();
			return {
				ms: performance.now() - start,
				bytes: body.length,
				status: response.status === 201 ? 200 : response.status
			};
		})
	);
	return summarise(
		`${UPLOADS} uploads at once (${UPLOAD_LINES} lines)`,
		`/api/events/${eventId}/bids`,
		samples,
		(performance.now() - began) / 1000
	);
}

const owner = knex({ client: 'pg', connection: migrationDatabaseUrl(plan), pool: { min: 0, max: 2 } });
try {
	const buyer = await signInBuyer();
	const cookie = await cookieOf(buyer);
	const demo = await owner('events').where({ reference: 'FP-2027-PKG' }).first('id');
	if (!demo) throw new Error('the demo event FP-2027-PKG is missing: run `npm start` once, which seeds it');
	const runId = await finishedRun(owner, buyer, demo.id);
	const pages: [string, string, string?][] = [
		["buyer's events list", '/buyer/events'],
		['event page', `/buyer/events/${demo.id}`],
		['bids tabulation', `/buyer/events/${demo.id}/bids`],
		['run page', `/buyer/events/${demo.id}/award/runs/${runId}`],
		['GET /api/events', '/api/events', 'application/json']
	];
	// BENCH_ONLY: a comma-separated list of words; only the pages (and "uploads") whose name holds one run.
	const only = process.env.BENCH_ONLY?.split(',').map((w) => w.trim().toLowerCase());
	const chosen = (name: string) => !only || only.some((w) => name.toLowerCase().includes(w));
	const results: Figures[] = [];
	for (const [name, path, accept] of pages.filter(([name]) => chosen(name))) {
		results.push(await load(name, path, cookie, accept));
		console.log(`measured ${name}`);
	}
	if (chosen('uploads')) results.push(await uploadsAtOnce(owner));
	const report = {
		at: new Date().toISOString(),
		machine: {
			cores: cpus().length,
			cpu: cpus()[0]?.model ?? 'unknown',
			memoryGb: Math.round(totalmem() / 2 ** 30)
		},
		connections: CONNECTIONS,
		seconds: SECONDS,
		warmupSeconds: WARMUP_SECONDS,
		targets: { pageP95Ms: 300, uploadP95Ms: 3000 },
		results
	};
	mkdirSync(dirname(output), { recursive: true });
	writeFileSync(output, JSON.stringify(report, null, '\t'));
	console.log(
		`\n${CONNECTIONS} connections, ${SECONDS} s each, ${report.machine.cores} cores; figures in ${output}\n`
	);
	console.log(
		['what', 'requests', 'errors', 'p50 ms', 'p95 ms', 'max ms', 'bytes', 'cpu ms/req']
			.map((h, k) => (k ? h.padStart(k === 7 ? 11 : 9) : h.padEnd(34)))
			.join('')
	);
	for (const r of results)
		console.log(
			[
				r.name.padEnd(34),
				...[r.requests, r.errors, r.p50, r.p95, r.max, r.bytes].map((v) => String(v).padStart(9)),
				String(r.cpuMsPerRequest ?? '').padStart(11)
			].join('')
		);
} finally {
	agent.destroy();
	await owner.destroy();
}
