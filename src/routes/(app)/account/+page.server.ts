import { fail } from '@sveltejs/kit';
import { message, setError, superValidate } from 'sveltekit-superforms';
import { zod4 } from 'sveltekit-superforms/adapters';
import { isStaff } from '$lib/roles';
import { setPasswordSchema } from '$lib/schemas/account';
import { currentSessionId, SESSION_HOURS } from '$lib/server/auth';
import { requireRole, requireUser } from '$lib/server/auth/guard';
import { db } from '$lib/server/db/knex';
import { listOpenSessions } from '$lib/server/db/sessions';
import { findUserById } from '$lib/server/db/users';
import { requestContext } from '$lib/server/request-context';
import { RuleViolation } from '$lib/server/services/errors';
import { setOwnPassword } from '$lib/server/services/users';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireUser(event);
	const [row, sessions] = await Promise.all([
		findUserById(db(), user.id),
		listOpenSessions(db(), user.id, SESSION_HOURS)
	]);
	const current = currentSessionId();
	return {
		title: 'Your account',
		canHavePassword: isStaff(user.role) && user.role !== 'auditor',
		readOnly: user.role === 'auditor',
		hasPassword: Boolean(row?.password_hash),
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
		try {
			await setOwnPassword(user, form.data, requestContext(event));
		} catch (error) {
			if (error instanceof RuleViolation) {
				return setError(
					form,
					(error.field ?? 'newPassword') as 'currentPassword' | 'newPassword',
					error.message
				);
			}
			throw error;
		}
		form.data = { currentPassword: '', newPassword: '', confirmPassword: '' };
		return message(form, 'Password saved. Use it the next time you sign in.');
	}
};
