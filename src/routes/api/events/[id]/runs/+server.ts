import { api } from '$lib/server/api';
import { runsById } from '$lib/server/services/award-runs';
import { runSummary } from '$lib/server/services/award-views';

/** The progress of some runs of the event (`?run=<id>&run=<id>`): what the award page polls. */
export const GET = api(async (user, event) => {
	const runs = await runsById(user, event.params.id!, event.url.searchParams.getAll('run'));
	return { runs: runs.map(runSummary) };
});
