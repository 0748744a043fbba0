import { fail } from '@sveltejs/kit';
import { message, superValidate } from 'sveltekit-superforms';
import { zod4 } from 'sveltekit-superforms/adapters';
import { isStaff } from '$lib/roles';
import { setPasswordSchema } from '$lib/schemas/account';
import { currentSessionId, SESSION_HOURS } from '$lib/server/auth';
import { requireRole, requireUser } from '$lib/server/auth/guard';
import { requestContext } from '$lib/server/request-context';
import { orFieldError } from '$lib/server/route-errors';
import { ownAccount, setOwnPassword } from '$lib/server/services/users';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireUser(event);
	const { hasPassword, sessions } = await ownAccount(user, SESSION_HOURS);
	const current = currentSessionId();
	return {
		title: 'Your account',
		canHavePassword: isStaff(user.role) && user.role !== 'auditor',
		readOnly: user.role === 'auditor',
		hasPassword,
		// Never the session ids: they stay on the server.
		sessions: sessions.map((s) => ({
			current: s.id === current,
			signedInAt: s.created_at.toISOString(),
			lastSeen: s.last_seen.toISOString(),
			browser: s.user_agent ?? 'Unknown browser',
			ip: s.ip
		})),
		form: await superValidate(zod4(setPasswordSchema))
	};
};

export const actions: Actions = {
	default: async (event) => {
		const user = requireRole(event, 'admin', 'buyer', 'approver');
		const form = await superValidate(event.request, zod4(setPasswordSchema));
		if (!form.valid) return fail(400, { form });
		return orFieldError(
			form,
			{ known: ['currentPassword', 'newPassword'], fallback: 'newPassword', status: false },
			async () => {
				await setOwnPassword(user, form.data, requestContext(event));
				form.data = { currentPassword: '', newPassword: '', confirmPassword: '' };
				return message(form, 'Password saved. Use it the next time you sign in.');
			}
		);
	}
};
