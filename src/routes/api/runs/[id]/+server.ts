import { api } from '$lib/server/api';
import { findRun } from '$lib/server/services/award-runs';
import { runJson } from '$lib/server/services/award-views';

export const GET = api(async (user, event) => {
	const { run } = await findRun(user, event.params.id!);
	return runJson(run, { withProblem: event.url.searchParams.get('problem') === '1' });
});
