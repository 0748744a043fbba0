import type { CautionKey } from '$lib/cautions';
import { requireRole } from '$lib/server/auth/guard';
import { auditorHome } from '$lib/server/services/home';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'auditor');
	const cautions: CautionKey[] = [];
	const { closed, sealed } = await auditorHome(user);
	return { title: 'Home', user, cautions, closed, sealed };
};
