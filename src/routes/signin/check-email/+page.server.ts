import { config } from '$lib/server/config';
import type { PageServerLoad } from './$types';

export const load: PageServerLoad = () => ({
	title: 'Check your e-mail',
	mailboxAvailable: Boolean(config().MAIL_FAKE_API)
});
