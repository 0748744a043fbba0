import type { CautionKey } from '$lib/cautions';
import { requireRole } from '$lib/server/auth/guard';
import { awaitingSignoff } from '$lib/server/services/award-views';
import { approverHistory } from '$lib/server/services/home';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'approver');
	const cautions: CautionKey[] = ['decisionSupport', 'standstill'];
	const [pending, history] = await Promise.all([awaitingSignoff(user), approverHistory(user)]);
	return { title: 'Home', user, cautions, pending, history };
};
