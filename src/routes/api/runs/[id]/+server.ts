import { api } from '$lib/server/api';
import { findRun, runJson } from '$lib/server/services/awards';

export const GET = api(async (user, event) => {
	const { run } = await findRun(user, event.params.id!);
	return runJson(run, { withProblem: event.url.searchParams.get('problem') === '1' });
});
