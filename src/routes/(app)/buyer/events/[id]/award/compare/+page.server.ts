import type { CautionKey } from '$lib/cautions';
import { requireRole } from '$lib/server/auth/guard';
import { httpError } from '$lib/server/http';
import { compareRuns } from '$lib/server/run-export';
import { orErrorPage } from '$lib/server/route-errors';
import { findRunView } from '$lib/server/services/award-runs';
import { runJson } from '$lib/server/services/award-views';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	const ids = event.url.searchParams.getAll('run').slice(0, 4);
	if (ids.length < 2) httpError(400, 'Choose two to four runs to compare.', { path: event.url.pathname });
	const runs = [];
	for (const id of ids) {
		const { run } = await orErrorPage(event, () => findRunView(user, id, event.params.id));
		runs.push(runJson(run));
	}
	const cautions: CautionKey[] = ['decisionSupport'];
	return { comparison: compareRuns(runs), cautions };
};
