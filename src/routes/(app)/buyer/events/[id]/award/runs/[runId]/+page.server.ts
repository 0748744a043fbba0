import type { CautionKey } from '$lib/cautions';
import { requireRole } from '$lib/server/auth/guard';
import { hasAwardReport } from '$lib/server/reports/award-report';
import { orErrorPage, orFail } from '$lib/server/route-errors';
import { runLowPrices } from '$lib/server/services/abnormally-low';
import { findRunView } from '$lib/server/services/award-runs';
import { allocationPage, runPageJson } from '$lib/server/services/award-views';
import { submitRun } from '$lib/server/services/signoff';
import { runEvaluation } from '$lib/server/services/run-evaluation';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	const { run } = await orErrorPage(event, () => findRunView(user, event.params.runId, event.params.id));
	const lowPrices = await orErrorPage(event, () => runLowPrices(user, event.params.id, run));
	const cautions: CautionKey[] = ['decisionSupport', 'standstill'];
	if (lowPrices.flags.length || lowPrices.excluded.length) cautions.push('abnormallyLow');
	// An adjusted run links to the run it was changed from (one the same user may see).
	const from = run.adjusted_from
		? await findRunView(user, run.adjusted_from, event.params.id).then(
				({ run: source }) => ({
					number: source.number,
					href: `/buyer/events/${event.params.id}/award/runs/${source.id}`
				}),
				() => null
			)
		: null;
	// Price and evaluated cost side by side, and each supplier's own currency, as on every run page.
	const evaluation = await runEvaluation(user, run, event.params.id);
	return {
		...evaluation,
		adjustedFrom: from,
		lowPrices,
		run: runPageJson(run),
		firstPage: run.status === 'done' ? allocationPage(run.result) : null,
		cautions,
		awardReport: run.status === 'done' && (await hasAwardReport(run.id))
	};
};

export const actions: Actions = {
	submit: async (event) => {
		const user = requireRole(event, 'buyer');
		const justification = String((await event.request.formData()).get('justification') ?? '').slice(0, 8000);
		return orFail(
			async () => {
				await submitRun(user, event.params.runId, event.params.id, justification);
				return { ok: 'Submitted for sign-off. An approver other than you decides.' };
			},
			// The text comes back so a refused form keeps what was typed.
			(v) => ({ error: v.message, field: v.field ?? null, justification })
		);
	}
};
