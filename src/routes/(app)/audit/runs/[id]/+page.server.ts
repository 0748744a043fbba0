import type { CautionKey } from '$lib/cautions';
import { requireRole } from '$lib/server/auth/guard';
import { hasAwardReport } from '$lib/server/reports/award-report';
import { orErrorPage } from '$lib/server/route-errors';
import { findRunView } from '$lib/server/services/award-runs';
import { allocationPage, runPageJson } from '$lib/server/services/award-views';
import { runEvaluation } from '$lib/server/services/run-evaluation';
import { runSignoffs } from '$lib/server/services/signoff';
import type { PageServerLoad } from './$types';

// An auditor reads a run as its buyers and approvers see it, with its sign-offs; the page has no forms
// (the hook refuses an auditor's every request but reads).
export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'auditor');
	return orErrorPage(event, async () => {
		const { run, event: row } = await findRunView(user, event.params.id);
		const [signoffs, awardReport, adjustedFrom, evaluation] = await Promise.all([
			runSignoffs(user, row.id, run.id),
			run.status === 'done' ? hasAwardReport(run.id) : false,
			run.adjusted_from
				? findRunView(user, run.adjusted_from, row.id).then(
						({ run: source }) => ({ number: source.number, href: `/audit/runs/${source.id}` }),
						() => null
					)
				: null,
			runEvaluation(user, run, row.id)
		]);
		const cautions: CautionKey[] = ['decisionSupport', 'standstill'];
		return {
			...evaluation,
			title: `Run ${run.number} of ${row.reference}`,
			cautions,
			event: {
				id: row.id,
				reference: row.reference,
				title: row.title,
				state: row.state,
				timeZone: row.time_zone
			},
			run: runPageJson(run),
			firstPage: run.status === 'done' ? allocationPage(run.result) : null,
			adjustedFrom,
			signoffs,
			awardReport
		};
	});
};
