import { requireRole } from '$lib/server/auth/guard';
import { requestContext } from '$lib/server/request-context';
import { orErrorPage, orFail } from '$lib/server/route-errors';
import { bidStatusJson, invitedBidStatus, remindNonBidders } from '$lib/server/services/reminders';
import { lowPriceSummary } from '$lib/server/services/abnormally-low';
import { evaluatedRows, tabulationEvaluated } from '$lib/server/services/criteria';
import { staffTabulation, tabulationView } from '$lib/server/services/tabulation';
import { roundsPage, startRoundFromForm } from '$lib/server/services/round-views';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	const found = await orErrorPage(event, () => staffTabulation(user, event.params.id));
	const submissions = found.submissions.map((s) => ({
		supplierName: s.supplier_name,
		revisions: s.revisions,
		latestRevision: s.latest_number,
		withdrawn: s.latest_source === 'withdrawal',
		submittedAt: s.latest_at.toISOString()
	}));
	if (found.sealed) {
		const status = await orErrorPage(event, () => invitedBidStatus(user, event.params.id));
		return { sealed: true as const, submissions, bidStatus: bidStatusJson(status) };
	}
	// Price and evaluated cost side by side, where the event has non-price criteria.
	const evaluated = await tabulationEvaluated(user, event.params.id, found.tab);
	return {
		sealed: false as const,
		submissions,
		evaluatedCosts: evaluatedRows(evaluated),
		...tabulationView(found.tab, event.url.searchParams, found.event.currency),
		lowPrices: lowPriceSummary(found.tab, found.event.currency),
		rounds: await orErrorPage(event, () => roundsPage(user, found.event, found.tab))
	};
};

export const actions: Actions = {
	round: async (event) => {
		const user = requireRole(event, 'buyer');
		const form = await event.request.formData();
		return orFail(
			async () => ({
				roundStarted: await startRoundFromForm(user, event.params.id, form, requestContext(event))
			}),
			(v) => ({ roundError: v.message, roundField: v.field ?? null })
		);
	},
	remind: async (event) => {
		const user = requireRole(event, 'buyer');
		return orFail(
			async () => {
				const { suppliers, mailed } = await remindNonBidders(user, event.params.id, requestContext(event));
				const contacts = `${mailed} contact${mailed === 1 ? '' : 's'}`;
				const firms = `${suppliers} supplier${suppliers === 1 ? '' : 's'}`;
				const have = suppliers === 1 ? 'has' : 'have';
				return { reminded: `Reminder sent to ${contacts} at the ${firms} that ${have} not bid.` };
			},
			(v) => ({ remindError: v.message })
		);
	}
};
