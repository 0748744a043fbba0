import type { CautionKey } from '$lib/cautions';
import { requireRole } from '$lib/server/auth/guard';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = (event) => {
	const user = requireRole(event, 'buyer');
	const cautions: CautionKey[] = ['decisionSupport'];
	return { title: 'Home', user, cautions };
};
