import { requireRole } from '$lib/server/auth/guard';
import { orErrorPage } from '$lib/server/route-errors';
import { eventDetail } from '$lib/server/services/event-views';
import type { LayoutServerLoad } from './$types';

export const load: LayoutServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	const detail = await orErrorPage(event, () => eventDetail(user, event.params.id));
	return { detail, title: detail.event.reference };
};
