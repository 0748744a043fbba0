import { fail, redirect } from '@sveltejs/kit';
import type { CautionKey } from '$lib/cautions';
import { requireRole } from '$lib/server/auth/guard';
import { orErrorPage, orFail } from '$lib/server/route-errors';
import { findRunView } from '$lib/server/services/award-runs';
import { allocationPage, runPageJson } from '$lib/server/services/award-views';
import { runEvaluation } from '$lib/server/services/run-evaluation';
import { decide, pendingSignoff, runSignoffs } from '$lib/server/services/signoff';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'approver');
	return orErrorPage(event, async () => {
		const { run, event: row } = await findRunView(user, event.params.id);
		const [pending, signoffs, evaluation] = await Promise.all([
			pendingSignoff(user, row.id),
			runSignoffs(user, row.id, run.id),
			runEvaluation(user, run, row.id)
		]);
		// The latest decision on this run, for the banner of a run no longer awaiting sign-off.
		const decided = signoffs.filter((s) => s.decision !== null).at(-1) ?? null;
		const cautions: CautionKey[] = ['decisionSupport', 'standstill', 'lateRuleChange'];
		return {
			title: `Sign-off of ${row.reference}`,
			cautions,
			...evaluation,
			run: runPageJson(run),
			firstPage: run.status === 'done' ? allocationPage(run.result) : null,
			event: { reference: row.reference, title: row.title, state: row.state, timeZone: row.time_zone },
			awaiting: pending?.run_id === run.id,
			justification: pending?.run_id === run.id ? pending.justification : null,
			ownRun: pending?.submitted_by === user.id || run.created_by === user.id,
			decided: decided && {
				decision: decided.decision,
				by: decided.decidedBy,
				at: decided.decidedAt,
				comment: decided.comment
			}
		};
	});
};

export const actions: Actions = {
	decide: async (event) => {
		const user = requireRole(event, 'approver');
		const data = await event.request.formData();
		const decision = data.get('decision');
		if (decision !== 'approve' && decision !== 'return')
			return fail(400, { error: 'Choose approve or return.' });
		const comment = String(data.get('comment') ?? '').slice(0, 4000);
		// Returning without a comment is refused by decide (422 on "comment").
		// The refusal names its field (comment) so the page shows it there; the comment comes back as typed.
		return orFail(
			async () => {
				await decide(user, event.params.id, decision, comment);
				redirect(303, '/approver');
			},
			(v) => ({ error: v.message, field: v.field ?? null, comment })
		);
	}
};
