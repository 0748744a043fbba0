import type { CautionKey } from '$lib/cautions';
import { requireRole } from '$lib/server/auth/guard';
import { buyerHome } from '$lib/server/services/home';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	const cautions: CautionKey[] = ['decisionSupport'];
	return { title: 'Home', user, cautions, work: await buyerHome(user) };
};
