import { fail } from '@sveltejs/kit';
import { message, superValidate } from 'sveltekit-superforms';
import { zod4 } from 'sveltekit-superforms/adapters';
import { inviteUserSchema, setActiveSchema, setRoleSchema, userIdSchema } from '$lib/schemas/users';
import { requireRole } from '$lib/server/auth/guard';
import { requestContext } from '$lib/server/request-context';
import { orFail, orFieldError } from '$lib/server/route-errors';
import {
	changeRole,
	inviteUser,
	managedUsers,
	resendInvitation,
	setActive
} from '$lib/server/services/users';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const admin = requireRole(event, 'admin');
	const { users, suppliers } = await managedUsers(admin);
	return {
		title: 'Users',
		users: users.map((u) => ({
			id: u.id,
			name: u.name ?? '',
			email: u.email,
			role: u.role,
			organisationName: u.organisation_name,
			active: !u.deactivated_at,
			hasPassword: Boolean(u.password_hash),
			createdAt: u.created_at.toISOString()
		})),
		suppliers: suppliers.map((s) => ({ id: s.id, name: s.name })),
		inviteForm: await superValidate(zod4(inviteUserSchema), { id: 'invite' })
	};
};

type RowOutcome = { userId: number; ok: boolean; text: string };

function rowAction(userId: number, work: () => Promise<string>) {
	return orFail(
		async () => ({ row: { userId, ok: true, text: await work() } satisfies RowOutcome }),
		(v) => ({ row: { userId, ok: false, text: v.message } satisfies RowOutcome })
	);
}

export const actions: Actions = {
	invite: async (event) => {
		const actor = requireRole(event, 'admin');
		const form = await superValidate(event.request, zod4(inviteUserSchema), { id: 'invite' });
		if (!form.valid) return fail(400, { form });
		return orFieldError(
			form,
			{ known: ['email', 'name', 'role', 'supplierOrganisationId', 'newSupplierName'], fallback: 'email' },
			async () => {
				const { user, mailed } = await inviteUser(actor, form.data, requestContext(event));
				return message(
					form,
					mailed
						? `Invited ${user.email}; the invitation with a sign-in link is on its way.`
						: `Saved ${user.email}, but the invitation e-mail could not be sent. Use “Send invitation again” once mail works.`
				);
			}
		);
	},
	setRole: async (event) => {
		const actor = requireRole(event, 'admin');
		const form = await superValidate(event.request, zod4(setRoleSchema));
		if (!form.valid)
			return fail(400, { row: { userId: form.data.userId, ok: false, text: 'Choose a role.' } });
		return rowAction(form.data.userId, async () => {
			await changeRole(actor, form.data.userId, form.data.role, requestContext(event));
			return 'Role saved.';
		});
	},
	setActive: async (event) => {
		const actor = requireRole(event, 'admin');
		const form = await superValidate(event.request, zod4(setActiveSchema));
		if (!form.valid)
			return fail(400, {
				row: { userId: form.data.userId, ok: false, text: 'That request was not complete.' }
			});
		return rowAction(form.data.userId, async () => {
			await setActive(actor, form.data.userId, form.data.active, requestContext(event));
			return form.data.active
				? 'Account reactivated.'
				: 'Account deactivated; its sessions end at the next request.';
		});
	},
	resend: async (event) => {
		const actor = requireRole(event, 'admin');
		const form = await superValidate(event.request, zod4(userIdSchema));
		if (!form.valid)
			return fail(400, { row: { userId: 0, ok: false, text: 'That request was not complete.' } });
		return rowAction(form.data.userId, async () =>
			(await resendInvitation(actor, form.data.userId, requestContext(event)))
				? 'Invitation sent again.'
				: 'The e-mail could not be sent; try again later.'
		);
	}
};
