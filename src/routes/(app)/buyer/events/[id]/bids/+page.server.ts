import { requireRole } from '$lib/server/auth/guard';
import { requestContext } from '$lib/server/request-context';
import { orErrorPage, orFail } from '$lib/server/route-errors';
import { bidStatusJson, invitedBidStatus, remindNonBidders } from '$lib/server/services/reminders';
import {
	comparedFrom,
	staffTabulation,
	tabulationLots,
	tabulationPage,
	tabulationQuery,
	tabulationTotals,
	viewTabulation
} from '$lib/server/services/tabulation';
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
	const params = event.url.searchParams;
	const query = tabulationQuery(params);
	const view = viewTabulation(found.tab, query);
	const compared = comparedFrom(params);
	return {
		sealed: false as const,
		submissions,
		query: {
			lot: params.get('lot') ?? '',
			bidder: query.bidder ?? '',
			lowest: query.lowest ?? '',
			q: query.text ?? '',
			sort: query.sort ?? 'position',
			dir: query.descending ? ('desc' as const) : ('asc' as const),
			show: compared
		},
		...tabulationLots(found.tab),
		...tabulationPage(found.tab, view, found.event.currency, compared),
		...tabulationTotals(found.tab, found.event.currency),
		matched: view.matched,
		page: view.page,
		pages: view.pages
	};
};

export const actions: Actions = {
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
