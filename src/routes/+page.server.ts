import { redirect } from '@sveltejs/kit';
import { homePath } from '$lib/roles';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = ({ locals }) => {
	redirect(303, locals.user ? homePath[locals.user.role] : '/signin');
};
