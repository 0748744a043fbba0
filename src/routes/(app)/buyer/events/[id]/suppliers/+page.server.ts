import { fail } from '@sveltejs/kit';
import { message, setError, superValidate } from 'sveltekit-superforms';
import { zod4 } from 'sveltekit-superforms/adapters';
import { inviteSupplierSchema } from '$lib/schemas/events';
import { requireRole } from '$lib/server/auth/guard';
import { db } from '$lib/server/db/knex';
import { listOrganisations } from '$lib/server/db/organisations';
import { requestContext } from '$lib/server/request-context';
import { RuleViolation } from '$lib/server/services/errors';
import { inviteSupplier, removeInvitation, tagSupplier } from '$lib/server/services/events';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	requireRole(event, 'buyer');
	const suppliers = await listOrganisations(db(), 'supplier');
	return {
		suppliers: suppliers.map((s) => ({ id: s.id, name: s.name })),
		form: await superValidate(zod4(inviteSupplierSchema), { id: 'invite-supplier' })
	};
};

export const actions: Actions = {
	invite: async (event) => {
		const user = requireRole(event, 'buyer');
		const form = await superValidate(event.request, zod4(inviteSupplierSchema), { id: 'invite-supplier' });
		if (!form.valid) return fail(400, { form });
		try {
			const outcome = await inviteSupplier(user, event.params.id, form.data, requestContext(event));
			return message(
				form,
				outcome.added
					? `${outcome.organisationName} is invited.`
					: `${outcome.organisationName} was invited already.`
			);
		} catch (error) {
			if (error instanceof RuleViolation) {
				const field = (error.field ?? 'supplierOrganisationId') as
					'supplierOrganisationId' | 'email' | 'newSupplierName';
				return setError(form, field, error.message, { status: error.status });
			}
			throw error;
		}
	},
	tags: async (event) => {
		const user = requireRole(event, 'buyer');
		const data = await event.request.formData();
		const organisationId = String(data.get('supplierOrganisationId') ?? '');
		const tags = String(data.get('tags') ?? '').split(/[\s,]+/);
		try {
			const saved = await tagSupplier(user, event.params.id, organisationId, tags);
			return {
				tagged: { organisationId, text: saved.length ? `Tags saved: ${saved.join(', ')}.` : 'Tags removed.' }
			};
		} catch (error) {
			if (error instanceof RuleViolation)
				return fail(error.status, { tagError: { organisationId, text: error.message } });
			throw error;
		}
	},
	remove: async (event) => {
		const user = requireRole(event, 'buyer');
		const organisationId = String((await event.request.formData()).get('supplierOrganisationId') ?? '');
		try {
			await removeInvitation(user, event.params.id, organisationId);
			return { removed: 'The invitation is withdrawn.' };
		} catch (error) {
			if (error instanceof RuleViolation) return fail(error.status, { removeError: error.message });
			throw error;
		}
	}
};
