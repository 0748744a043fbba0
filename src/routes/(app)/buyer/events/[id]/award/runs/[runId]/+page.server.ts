import { fail } from '@sveltejs/kit';
import type { CautionKey } from '$lib/cautions';
import { requireRole } from '$lib/server/auth/guard';
import { httpError } from '$lib/server/http';
import { findRun, runJson, submitRun } from '$lib/server/services/awards';
import { RuleViolation } from '$lib/server/services/errors';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	const { run } = await findRun(user, event.params.runId, event.params.id).catch((error: unknown) => {
		if (error instanceof RuleViolation) httpError(error.status, error.message, { path: event.url.pathname });
		throw error;
	});
	const cautions: CautionKey[] = ['decisionSupport', 'standstill'];
	return { run: runJson(run), cautions };
};

export const actions: Actions = {
	submit: async (event) => {
		const user = requireRole(event, 'buyer');
		try {
			await submitRun(user, event.params.runId, event.params.id);
			return { ok: 'Submitted for sign-off. An approver other than you decides.' };
		} catch (error) {
			if (error instanceof RuleViolation) return fail(error.status, { error: error.message });
			throw error;
		}
	}
};
