import { requireRole } from '$lib/server/auth/guard';
import { orErrorPage } from '$lib/server/route-errors';
import { tabulation } from '$lib/server/services/bids';
import { tabulationJson } from '$lib/server/services/event-views';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	const asked = Number.parseInt(event.url.searchParams.get('page') ?? '1', 10);
	const tab = await orErrorPage(event, () => tabulation(user, event.params.id, asked));
	return {
		sealed: tab.sealed,
		submissions: tab.submissions.map((s) => ({
			supplierName: s.supplier_name,
			revisions: s.revisions,
			latestRevision: s.latest_number,
			withdrawn: s.latest_source === 'withdrawal',
			submittedAt: s.latest_at.toISOString()
		})),
		// Unit prices and price breaks of the page's items; bundles are on the award side.
		...tabulationJson(tab),
		page: tab.page,
		pages: tab.pages
	};
};
