import { requireRole } from '$lib/server/auth/guard';
import { httpError } from '$lib/server/http';
import { RuleViolation } from '$lib/server/services/errors';
import { eventDetail } from '$lib/server/services/event-views';
import type { LayoutServerLoad } from './$types';

export const load: LayoutServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	try {
		const detail = await eventDetail(user, event.params.id);
		return { detail, title: detail.event.reference };
	} catch (error) {
		if (error instanceof RuleViolation) httpError(error.status, error.message, { path: event.url.pathname });
		throw error;
	}
};
