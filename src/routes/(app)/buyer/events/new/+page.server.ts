import { fail, redirect } from '@sveltejs/kit';
import { superValidate } from 'sveltekit-superforms';
import { zod4 } from 'sveltekit-superforms/adapters';
import { requireRole } from '$lib/server/auth/guard';
import { currencies, eventSchema, fieldsFromForm, timeZones } from '$lib/server/event-form';
import { orFieldError } from '$lib/server/route-errors';
import { createEvent } from '$lib/server/services/events';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	requireRole(event, 'buyer');
	const form = await superValidate(zod4(eventSchema), {
		defaults: {
			reference: '',
			title: '',
			description: '',
			currency: 'EUR',
			incoterm: 'DAP' as const,
			deliveryPlace: '',
			deadlineLocal: '',
			timeZone: 'Europe/Berlin',
			bidValidityDays: 90,
			allowPriceBreaks: false,
			allowCapacity: false,
			allowBundles: false,
			allowPackSizes: false
		}
	});
	return { title: 'New event', form, timeZones, currencies };
};

export const actions: Actions = {
	default: async (event) => {
		const user = requireRole(event, 'buyer');
		const form = await superValidate(event.request, zod4(eventSchema));
		if (!form.valid) return fail(400, { form });
		return orFieldError(form, { known: ['deadlineLocal'], fallback: 'reference' }, async () => {
			const { id } = await createEvent(user, fieldsFromForm(form.data));
			redirect(303, `/buyer/events/${id}/items`);
		});
	}
};
