import type { CautionKey } from '$lib/cautions';
import { requireRole } from '$lib/server/auth/guard';
import { orErrorPage } from '$lib/server/route-errors';
import { compareEventRuns, comparisonQuery } from '$lib/server/services/run-comparison';
import type { PageServerLoad } from './$types';

/** Fewer than two runs, more than four or an unfinished one: the page says so and offers the chooser. */
export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	const found = await orErrorPage(event, () =>
		compareEventRuns(user, event.params.id, comparisonQuery(event.url.searchParams))
	);
	const cautions: CautionKey[] = ['decisionSupport'];
	return { ...found, cautions };
};
