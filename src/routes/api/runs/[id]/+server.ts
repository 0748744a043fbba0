import { api } from '$lib/server/api';
import { findRun } from '$lib/server/services/award-runs';
import { runJson, runPageJson } from '$lib/server/services/award-views';

/** A run; `?summary=1` leaves out the allocation lines (then read them from /api/runs/:id/lines). */
export const GET = api(async (user, event) => {
	const { run } = await findRun(user, event.params.id!);
	if (event.url.searchParams.get('summary') === '1') return runPageJson(run);
	return runJson(run, { withProblem: event.url.searchParams.get('problem') === '1' });
});
