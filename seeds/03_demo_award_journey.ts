import type { Knex } from 'knex';
import type { SessionUser } from '../src/lib/server/auth/session-user';
import { closeDb, db } from '../src/lib/server/db/knex';
import { stopJobs } from '../src/lib/server/jobs/queue';
import { startRun } from '../src/lib/server/services/award-runs';
import { closeSolverPool, executeRun, explainRun } from '../src/lib/server/services/run-execution';
import { decide, submitRun } from '../src/lib/server/services/signoff';
import { AWARDED, AWARDED_PLAN } from './02_demo_events';

// Takes the demo's pallets event (02_demo_events.ts) through the award journey as its people would: the
// buyer runs the lowest-cost plan and the plan with a share cap per lot, submits the second with a
// justification, and the approver approves it, which awards the event and queues one notice per bidder
// (the worker mails them once the stack is up). Every step goes through the app's own services, on the
// app's connection (DATABASE_URL), so the run, its hashes, the sign-off and the trail are the real thing;
// each step is taken only if it is still to do, so a second `npm start`, or one after a failed first,
// finishes the journey without repeating it.

const JUSTIFICATION =
	'At most 60% of each lot to one supplier keeps a second source on pallets and strapping; the ' +
	'share caps cost little over the lowest-cost award.';

async function sessionUser(knex: Knex, email: string): Promise<SessionUser> {
	const row = await knex('users as u')
		.join('organisations as o', 'o.id', 'u.organisation_id')
		.where('u.email', email)
		.first('u.id', 'u.name', 'u.email', 'u.role', 'u.organisation_id', 'o.name as organisation_name');
	if (!row) throw new Error(`the demo user ${email} is missing: run the seeds in order`);
	return {
		id: row.id,
		name: row.name,
		email: row.email,
		role: row.role,
		organisationId: row.organisation_id,
		organisationName: row.organisation_name
	};
}

/** The services write through DATABASE_URL, the seeds through the owner's URL: both must be one database. */
async function assertOneDatabase(knex: Knex): Promise<void> {
	const where = `select current_database() as name, inet_server_port() as port`;
	const [seeds, app] = await Promise.all([knex.raw(where), db().raw(where)]);
	const a = seeds.rows[0] as { name: string; port: number };
	const b = app.rows[0] as { name: string; port: number };
	if (a.name !== b.name || a.port !== b.port)
		throw new Error(
			`the seeds write to database ${a.name} (port ${a.port}) but DATABASE_URL names ${b.name} ` +
				`(port ${b.port}): set both to the same database`
		);
}

/** The plan's newest finished run, or a new run solved here. */
async function finishedRun(knex: Knex, buyer: SessionUser, planId: string): Promise<string> {
	const done = await knex('award_runs')
		.where({ plan_id: planId, status: 'done' })
		.orderBy('number', 'desc')
		.first('id', 'explanation_status');
	const runId = (done?.id as string | undefined) ?? (await startRun(buyer, planId)).id;
	if (!done) await executeRun(runId);
	await explainRun(runId);
	const run = await knex('award_runs').where({ id: runId }).first('status', 'error');
	if (run.status !== 'done') throw new Error(`the demo run ${runId} ended ${run.status}: ${run.error}`);
	return runId;
}

export async function seed(knex: Knex): Promise<void> {
	const event = await knex('events').where({ reference: AWARDED }).first('id', 'state');
	if (!event || event.state === 'awarded') return;
	await assertOneDatabase(knex);
	try {
		const buyer = await sessionUser(knex, 'buyer@fernhollow.test');
		const approver = await sessionUser(knex, 'approver@fernhollow.test');
		const plans = await knex('award_plans').where({ event_id: event.id }).select('id', 'name', 'lowest_cost');
		const lowest = plans.find((p) => p.lowest_cost)!;
		const capped = plans.find((p) => p.name === AWARDED_PLAN)!;
		await finishedRun(knex, buyer, lowest.id);
		const runId = await finishedRun(knex, buyer, capped.id);
		const state = (await knex('events').where({ id: event.id }).first('state')).state as string;
		if (state === 'in_evaluation') await submitRun(buyer, runId, event.id, JUSTIFICATION);
		// A first load that stopped after submitting: the run submitted then is the one decided on.
		const pending = await knex('signoffs')
			.where({ event_id: event.id })
			.whereNull('decision')
			.whereNull('superseded_at')
			.first('run_id');
		await decide(
			approver,
			pending?.run_id ?? runId,
			'approve',
			'Approved: the second source is worth its cost.'
		);
	} finally {
		await closeSolverPool();
		await stopJobs();
		await closeDb();
	}
}
