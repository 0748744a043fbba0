import type { CautionKey } from '$lib/cautions';
import { requireRole } from '$lib/server/auth/guard';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = (event) => {
	const user = requireRole(event, 'approver');
	const cautions: CautionKey[] = ['decisionSupport', 'standstill'];
	return { title: 'Home', user, cautions };
};
