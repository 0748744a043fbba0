import { json } from '@sveltejs/kit';
import { api } from '$lib/server/api';
import { startRun } from '$lib/server/services/award-runs';

/** Queues a run of the plan: 202 with the run's id; follow it at GET /api/runs/{id}. */
export const POST = api(async (user, event) => {
	const run = await startRun(user, event.params.id!);
	return json({ runId: run.id, number: run.number, status: run.status }, { status: 202 });
});
