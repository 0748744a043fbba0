import { fail, redirect } from '@sveltejs/kit';
import { superValidate } from 'sveltekit-superforms';
import { zod4 } from 'sveltekit-superforms/adapters';
import { homePath } from '$lib/roles';
import { linkSignInSchema, passwordSignInSchema } from '$lib/schemas/sign-in';
import { signInFromForm } from '$lib/server/auth';
import { requestSignInLink } from '$lib/server/auth/sign-in-links';
import { describeWait } from '$lib/server/auth/rate-limit';
import { config } from '$lib/server/config';
import type { Actions, PageServerLoad } from './$types';

/** What the sign-in page says after Auth.js sends a person back to it. One wording per cause a person can act on. */
function noticeFor(url: URL): string | null {
	const error = url.searchParams.get('error');
	const code = url.searchParams.get('code') ?? '';
	const wait = /^wait-(\d+)$/.exec(code)?.[1] ?? url.searchParams.get('wait');
	if (wait && (error === 'CredentialsSignin' || error === 'TooManyAttempts')) {
		return `Too many sign-in attempts. For your account’s safety, please wait ${describeWait(Number(wait))} and try again.`;
	}
	if (error === 'CredentialsSignin') return 'The e-mail address or password is not right.';
	if (error === 'AccessDenied') return 'This account cannot sign in. Ask your administrator to check it.';
	if (error) return 'Signing in did not work. Please try again.';
	return null;
}

export const load: PageServerLoad = async ({ locals, url }) => {
	if (locals.user) redirect(303, homePath[locals.user.role]);
	const redirectTo = url.searchParams.get('callbackUrl') ?? '/';
	const email = url.searchParams.get('email') ?? '';
	return {
		title: 'Sign in',
		notice: noticeFor(url),
		signedOut: url.searchParams.has('signedOut'),
		mailboxAvailable: Boolean(config().MAIL_FAKE_API),
		passwordForm: await superValidate(
			{ providerId: 'credentials' as const, email, redirectTo },
			zod4(passwordSignInSchema),
			{
				errors: false,
				id: 'password'
			}
		),
		linkForm: await superValidate(
			{ providerId: 'nodemailer' as const, email, redirectTo },
			zod4(linkSignInSchema),
			{
				errors: false,
				id: 'link'
			}
		)
	};
};

// Each form is checked here first (so a person sees which field is wrong). The password form is then
// handed to Auth.js, which reads the same body again: hence the clone.
export const actions: Actions = {
	password: async (event) => {
		const passwordForm = await superValidate(event.request.clone(), zod4(passwordSignInSchema), {
			id: 'password'
		});
		if (!passwordForm.valid) return fail(400, { passwordForm });
		await signInFromForm(event);
	},
	link: async (event) => {
		const linkForm = await superValidate(event.request, zod4(linkSignInSchema), { id: 'link' });
		if (!linkForm.valid) return fail(400, { linkForm });
		// The same answer for every address, registered or not: the link (if any) is sent in the background.
		const throttle = await requestSignInLink(linkForm.data.email, linkForm.data.redirectTo);
		if (throttle.blocked) redirect(303, `/signin?error=TooManyAttempts&wait=${throttle.retryAfterSeconds}`);
		redirect(303, '/signin/check-email');
	}
};
