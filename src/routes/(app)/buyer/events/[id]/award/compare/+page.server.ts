import type { CautionKey } from '$lib/cautions';
import { requireRole } from '$lib/server/auth/guard';
import { httpError } from '$lib/server/http';
import { compareRuns } from '$lib/server/run-export';
import { findRun, runJson } from '$lib/server/services/awards';
import { RuleViolation } from '$lib/server/services/errors';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	const ids = event.url.searchParams.getAll('run').slice(0, 4);
	if (ids.length < 2) httpError(400, 'Choose two to four runs to compare.', { path: event.url.pathname });
	const runs = [];
	for (const id of ids) {
		const { run } = await findRun(user, id, event.params.id).catch((error: unknown) => {
			if (error instanceof RuleViolation)
				httpError(error.status, error.message, { path: event.url.pathname });
			throw error;
		});
		runs.push(runJson(run));
	}
	const cautions: CautionKey[] = ['decisionSupport'];
	return { comparison: compareRuns(runs), cautions };
};
