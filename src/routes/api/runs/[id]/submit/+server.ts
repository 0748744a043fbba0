import { api } from '$lib/server/api';
import { submitRun } from '$lib/server/services/signoff';

export const POST = api(async (user, event) => {
	const signoff = await submitRun(user, event.params.id!);
	return { signoffId: signoff.id, boundHash: signoff.bound_hash.trim(), state: 'awaiting_signoff' };
});
