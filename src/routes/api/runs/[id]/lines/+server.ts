import { api } from '$lib/server/api';
import { findRunView } from '$lib/server/services/award-runs';
import { allocationPage, allocationQuery } from '$lib/server/services/award-views';

/** A page of a finished run's allocation: `?filter=&sort=item|supplier|cost&offset=&limit=` (at most 500). */
export const GET = api(async (user, event) => {
	const { run } = await findRunView(user, event.params.id!);
	return allocationPage(run.status === 'done' ? run.result : null, allocationQuery(event.url.searchParams));
});
