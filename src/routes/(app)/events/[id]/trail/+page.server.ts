import { requireRole } from '$lib/server/auth/guard';
import { httpError } from '$lib/server/http';
import { RuleViolation } from '$lib/server/services/errors';
import { eventTrailJson } from '$lib/server/services/trail-views';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer', 'approver', 'auditor', 'admin');
	try {
		const trail = await eventTrailJson(user, event.params.id);
		return { title: `Trail of ${trail.event.reference}`, trail, isBuyer: user.role === 'buyer' };
	} catch (error) {
		if (error instanceof RuleViolation) httpError(error.status, error.message, { path: event.url.pathname });
		throw error;
	}
};
