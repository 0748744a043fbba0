import { requireRole } from '$lib/server/auth/guard';
import { orErrorPage } from '$lib/server/route-errors';
import { eventHeader } from '$lib/server/services/event-views';
import type { LayoutServerLoad } from './$types';

/** The event's header for every tab; tabs that show more (eventDetail) return their own `detail`. */
export const load: LayoutServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	const detail = await orErrorPage(event, () => eventHeader(user, event.params.id));
	return { detail, title: detail.event.reference };
};
