import { fail } from '@sveltejs/kit';
import { message, superValidate } from 'sveltekit-superforms';
import { zod4 } from 'sveltekit-superforms/adapters';
import { inviteSupplierSchema } from '$lib/schemas/events';
import { requireRole } from '$lib/server/auth/guard';
import { requestContext } from '$lib/server/request-context';
import { orErrorPage, orFail, orFieldError } from '$lib/server/route-errors';
import { eventDetail } from '$lib/server/services/event-views';
import { inviteSupplier, removeInvitation, tagSupplier } from '$lib/server/services/events';
import { supplierDirectory } from '$lib/server/services/organisations';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	const [suppliers, detail] = await orErrorPage(event, () =>
		Promise.all([supplierDirectory(user), eventDetail(user, event.params.id)])
	);
	return {
		// The invitations, beside the layout's header.
		detail,
		suppliers: suppliers.map((s) => ({ id: s.id, name: s.name })),
		form: await superValidate(zod4(inviteSupplierSchema), { id: 'invite-supplier' })
	};
};

export const actions: Actions = {
	invite: async (event) => {
		const user = requireRole(event, 'buyer');
		const form = await superValidate(event.request, zod4(inviteSupplierSchema), { id: 'invite-supplier' });
		if (!form.valid) return fail(400, { form });
		return orFieldError(
			form,
			{ known: ['supplierOrganisationId', 'email', 'newSupplierName'], fallback: 'supplierOrganisationId' },
			async () => {
				const outcome = await inviteSupplier(user, event.params.id, form.data, requestContext(event));
				return message(
					form,
					outcome.added
						? `${outcome.organisationName} is invited.`
						: `${outcome.organisationName} was invited already.`
				);
			}
		);
	},
	tags: async (event) => {
		const user = requireRole(event, 'buyer');
		const data = await event.request.formData();
		const organisationId = String(data.get('supplierOrganisationId') ?? '');
		const tags = String(data.get('tags') ?? '').split(/[\s,]+/);
		return orFail(
			async () => {
				const saved = await tagSupplier(user, event.params.id, organisationId, tags);
				return {
					tagged: {
						organisationId,
						text: saved.length ? `Tags saved: ${saved.join(', ')}.` : 'Tags removed.'
					}
				};
			},
			(v) => ({ tagError: { organisationId, text: v.message } })
		);
	},
	remove: async (event) => {
		const user = requireRole(event, 'buyer');
		const organisationId = String((await event.request.formData()).get('supplierOrganisationId') ?? '');
		return orFail(
			async () => {
				await removeInvitation(user, event.params.id, organisationId);
				return { removed: 'The invitation is withdrawn.' };
			},
			(v) => ({ removeError: v.message })
		);
	}
};
