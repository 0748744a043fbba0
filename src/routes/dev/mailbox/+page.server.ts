import { error } from '@sveltejs/kit';
import { localMailboxAllowed } from '$lib/server/config';
import { listMailbox } from '$lib/server/mailbox';
import { newErrorId } from '$lib/server/http';
import type { PageServerLoad } from './$types';

// Public on purpose, and only when the app runs against the local SMTP fake: a person trying the demo
// must read sign-in links before signing in. Against a real relay MAIL_FAKE_API is unset and this is a 404;
// the server refuses to start with it set in production or behind a public origin (config.ts).
export const load: PageServerLoad = async ({ url }) => {
	if (!localMailboxAllowed())
		error(404, { message: 'There is no page at this address.', errorId: newErrorId() });
	const to = url.searchParams.get('to')?.toLowerCase() ?? '';
	const messages = (await listMailbox())
		.filter((m) => !to || m.to.some((a) => a.toLowerCase() === to))
		.slice(0, 200);
	return { title: 'Local mailbox', to, messages };
};
