import { signOut } from '$lib/server/auth';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = () => ({ title: 'Sign out' });

export const actions: Actions = { default: (event) => signOut(event) };
