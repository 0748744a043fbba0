import { api } from '$lib/server/api';
import { findRun, findRunView } from '$lib/server/services/award-runs';
import { runJson, runPageJson } from '$lib/server/services/award-views';

/**
 * A run; `?summary=1` leaves out the allocation lines (then read them from /api/runs/:id/lines), and
 * `?problem=1` adds the problem it solved (every item and bid, as snapshotted when it was started).
 */
export const GET = api(async (user, event) => {
	if (event.url.searchParams.get('problem') === '1') {
		const { run } = await findRun(user, event.params.id!);
		return runJson(run, { problem: run.problem });
	}
	const { run } = await findRunView(user, event.params.id!);
	if (event.url.searchParams.get('summary') === '1') return runPageJson(run);
	return runJson(run);
});
