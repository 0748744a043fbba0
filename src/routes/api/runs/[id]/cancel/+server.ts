import { api } from '$lib/server/api';
import { cancelRun } from '$lib/server/services/award-runs';

export const POST = api(async (user, event) => {
	await cancelRun(user, event.params.id!);
	return { cancelRequested: true };
});
