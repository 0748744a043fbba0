import { signOutEverywhere } from '$lib/server/auth';
import { requireUser } from '$lib/server/auth/guard';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = (event) => {
	requireUser(event);
	return { title: 'Sign out everywhere' };
};

export const actions: Actions = {
	default: (event) => signOutEverywhere(event, requireUser(event))
};
