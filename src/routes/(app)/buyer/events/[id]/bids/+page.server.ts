import { requireRole } from '$lib/server/auth/guard';
import { openedBids, submissions } from '$lib/server/services/bids';
import { bidJson, itemsFor } from '$lib/server/services/event-views';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	const { detail } = await event.parent();
	const sealed = ['draft', 'open'].includes(detail.event.state);
	const [received, bids, items] = await Promise.all([
		submissions(user, event.params.id),
		sealed ? Promise.resolve([]) : openedBids(user, event.params.id),
		sealed ? Promise.resolve([]) : itemsFor(user, event.params.id)
	]);
	return {
		sealed,
		submissions: received.map((s) => ({
			supplierName: s.supplier_name,
			revisions: s.revisions,
			latestRevision: s.latest_number,
			withdrawn: s.latest_source === 'withdrawal',
			submittedAt: s.latest_at.toISOString()
		})),
		bids: bids.map(bidJson),
		items
	};
};
