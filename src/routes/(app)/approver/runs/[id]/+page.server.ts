import { fail, redirect } from '@sveltejs/kit';
import type { CautionKey } from '$lib/cautions';
import { requireRole } from '$lib/server/auth/guard';
import { httpError } from '$lib/server/http';
import { decide, findRun, pendingSignoff, runJson } from '$lib/server/services/awards';
import { RuleViolation } from '$lib/server/services/errors';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'approver');
	try {
		const { run, event: row } = await findRun(user, event.params.id);
		const pending = await pendingSignoff(row.id);
		const cautions: CautionKey[] = ['decisionSupport', 'standstill', 'lateRuleChange'];
		return {
			title: `Sign-off of ${row.reference}`,
			cautions,
			run: runJson(run),
			event: { reference: row.reference, title: row.title, state: row.state },
			awaiting: pending?.run_id === run.id,
			ownRun: pending?.submitted_by === user.id || run.created_by === user.id
		};
	} catch (error) {
		if (error instanceof RuleViolation) httpError(error.status, error.message, { path: event.url.pathname });
		throw error;
	}
};

export const actions: Actions = {
	decide: async (event) => {
		const user = requireRole(event, 'approver');
		const data = await event.request.formData();
		const decision = data.get('decision');
		if (decision !== 'approve' && decision !== 'return')
			return fail(400, { error: 'Choose approve or return.' });
		const comment = String(data.get('comment') ?? '').slice(0, 4000);
		if (decision === 'return' && !comment.trim()) return fail(400, { error: 'Say why the run goes back.' });
		try {
			await decide(user, event.params.id, decision, comment);
		} catch (error) {
			if (error instanceof RuleViolation) return fail(error.status, { error: error.message });
			throw error;
		}
		redirect(303, '/approver');
	}
};
