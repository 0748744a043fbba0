import type { CautionKey } from '$lib/cautions';
import { requireRole } from '$lib/server/auth/guard';
import { supplierHome } from '$lib/server/services/home';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'supplier');
	const cautions: CautionKey[] = [];
	return { title: 'Home', user, cautions, events: await supplierHome(user) };
};
