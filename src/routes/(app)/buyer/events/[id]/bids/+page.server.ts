import { requireRole } from '$lib/server/auth/guard';
import { openedBids, submissions } from '$lib/server/services/bids';
import { bidJson, itemsFor } from '$lib/server/services/event-views';
import type { PageServerLoad } from './$types';

/** Items in one page of the opened-bids tabulation; the page sends only those items and their prices. */
const PAGE = 100;

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	const { detail } = await event.parent();
	const sealed = ['draft', 'open'].includes(detail.event.state);
	const [received, bids, allItems] = await Promise.all([
		submissions(user, event.params.id),
		sealed ? Promise.resolve([]) : openedBids(user, event.params.id),
		sealed ? Promise.resolve([]) : itemsFor(user, event.params.id)
	]);
	const pages = Math.max(1, Math.ceil(allItems.length / PAGE));
	const asked = Number.parseInt(event.url.searchParams.get('page') ?? '1', 10);
	const page = Number.isInteger(asked) ? Math.min(Math.max(asked, 1), pages) : 1;
	const items = allItems.slice((page - 1) * PAGE, page * PAGE);
	const onPage = new Set(items.map((i) => i.ref));
	return {
		sealed,
		submissions: received.map((s) => ({
			supplierName: s.supplier_name,
			revisions: s.revisions,
			latestRevision: s.latest_number,
			withdrawn: s.latest_source === 'withdrawal',
			submittedAt: s.latest_at.toISOString()
		})),
		// The tabulation shows unit prices and price breaks of the page's items; bundles are on the award side.
		bids: bids.map((bid) => {
			const { bundles: _bundles, lines, ...rest } = bidJson(bid);
			return { ...rest, lines: lines.filter((l) => onPage.has(l.item)) };
		}),
		items,
		page,
		pages
	};
};
