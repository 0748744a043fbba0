import { requireRole } from '$lib/server/auth/guard';
import { eventsFor } from '$lib/server/services/event-views';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	return { title: 'Events', events: await eventsFor(user) };
};
