import type { CautionKey } from '$lib/cautions';
import { requireRole } from '$lib/server/auth/guard';
import { orErrorPage, orFail } from '$lib/server/route-errors';
import { findRunView } from '$lib/server/services/award-runs';
import { allocationPage, runPageJson } from '$lib/server/services/award-views';
import { submitRun } from '$lib/server/services/signoff';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	const { run } = await orErrorPage(event, () => findRunView(user, event.params.runId, event.params.id));
	const cautions: CautionKey[] = ['decisionSupport', 'standstill'];
	return {
		run: runPageJson(run),
		firstPage: run.status === 'done' ? allocationPage(run.result) : null,
		cautions
	};
};

export const actions: Actions = {
	submit: async (event) => {
		const user = requireRole(event, 'buyer');
		return orFail(async () => {
			await submitRun(user, event.params.runId, event.params.id);
			return { ok: 'Submitted for sign-off. An approver other than you decides.' };
		});
	}
};
