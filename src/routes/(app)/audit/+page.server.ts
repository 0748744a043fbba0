import type { CautionKey } from '$lib/cautions';
import { requireRole } from '$lib/server/auth/guard';
import { auditorHome } from '$lib/server/services/home';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'auditor');
	const cautions: CautionKey[] = [];
	// ?page=N (from 1) pages the events past their deadline; anything else is the first page.
	const asked = Number.parseInt(event.url.searchParams.get('page') ?? '1', 10);
	const { closed, sealed, closedPage } = await auditorHome(user, Number.isFinite(asked) ? asked - 1 : 0);
	return { title: 'Home', user, cautions, closed, sealed, closedPage };
};
