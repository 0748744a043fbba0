import { requireRole } from '$lib/server/auth/guard';
import { orErrorPage } from '$lib/server/route-errors';
import { eventHeader, eventSummary } from '$lib/server/services/event-views';
import type { LayoutServerLoad } from './$types';

/** The event's header and summary figures for every tab; tabs that show more (eventDetail) return their own `detail`. */
export const load: LayoutServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	const [detail, summary] = await orErrorPage(event, () =>
		Promise.all([eventHeader(user, event.params.id), eventSummary(user, event.params.id)])
	);
	return { detail, summary, title: detail.event.reference };
};
