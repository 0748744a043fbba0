import { requireRole } from '$lib/server/auth/guard';
import { orErrorPage } from '$lib/server/route-errors';
import { eventTrailJson } from '$lib/server/services/trail-views';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer', 'approver', 'auditor');
	const trail = await orErrorPage(event, () => eventTrailJson(user, event.params.id));
	return { title: `Trail of ${trail.event.reference}`, trail, isBuyer: user.role === 'buyer' };
};
