import type { CautionKey } from '$lib/cautions';
import { requireRole } from '$lib/server/auth/guard';
import { eventsFor } from '$lib/server/services/event-views';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'auditor');
	const cautions: CautionKey[] = [];
	return { title: 'Home', user, cautions, events: await eventsFor(user) };
};
