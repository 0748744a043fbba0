import { requireRole } from '$lib/server/auth/guard';
import { orErrorPage } from '$lib/server/route-errors';
import {
	comparedFrom,
	staffTabulation,
	tabulationLots,
	tabulationPage,
	tabulationQuery,
	tabulationTotals,
	viewTabulation
} from '$lib/server/services/tabulation';
import type { PageServerLoad } from './$types';

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
	if (found.sealed) return { sealed: true as const, submissions };
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
