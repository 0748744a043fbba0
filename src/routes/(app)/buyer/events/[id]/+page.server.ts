import { fail } from '@sveltejs/kit';
import { message, superValidate } from 'sveltekit-superforms';
import { zod4 } from 'sveltekit-superforms/adapters';
import { amendmentSchema } from '$lib/schemas/events';
import { requireRole } from '$lib/server/auth/guard';
import {
	currencies,
	deadlineFrom,
	eventSchema,
	fieldsFromForm,
	formFromEvent,
	timeZones
} from '$lib/server/event-form';
import { requestContext } from '$lib/server/request-context';
import { orErrorPage, orFail, orFieldError } from '$lib/server/route-errors';
import { eventDetail } from '$lib/server/services/event-views';
import { amend, buyerEvent, publish, updateDraft } from '$lib/server/services/events';
import { eventRates, setDraftRates } from '$lib/server/services/currencies';
import { rateTableText } from '$lib/currencies';
import { toLocalInput } from '$lib/time';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	// An unknown id, or another organisation's event, is the 404 page (not a 500).
	const [row, detail, rates] = await orErrorPage(event, () =>
		Promise.all([
			buyerEvent(user, event.params.id),
			eventDetail(user, event.params.id),
			eventRates(user, event.params.id)
		])
	);
	return {
		// The amendments and the opening record, beside the layout's header.
		detail,
		form: await superValidate(formFromEvent(row), zod4(eventSchema), { id: 'event', errors: false }),
		amendForm: await superValidate(
			{
				summary: '',
				description: row.description,
				deliveryPlace: row.delivery_place,
				deadlineLocal: toLocalInput(row.deadline, row.time_zone),
				rates: rateTableText(rates)
			},
			zod4(amendmentSchema),
			{ id: 'amend', errors: false }
		),
		rates,
		// The choices of the edit form, shown only while the event is a draft (11 kB of every answer).
		timeZones: row.state === 'draft' ? timeZones : [],
		currencies: row.state === 'draft' ? currencies : []
	};
};

export const actions: Actions = {
	save: async (event) => {
		const user = requireRole(event, 'buyer');
		const form = await superValidate(event.request, zod4(eventSchema), { id: 'event' });
		if (!form.valid) return fail(400, { form });
		return orFieldError(form, { known: ['deadlineLocal', 'currency'], fallback: 'reference' }, async () => {
			await updateDraft(user, event.params.id, fieldsFromForm(form.data));
			return message(form, 'Saved.');
		});
	},
	rates: async (event) => {
		const user = requireRole(event, 'buyer');
		const text = String((await event.request.formData()).get('rates') ?? '').slice(0, 5000);
		return orFail(
			async () => {
				const rates = await setDraftRates(user, event.params.id, text);
				return { ratesSaved: `Saved ${rates.length} exchange rate${rates.length === 1 ? '' : 's'}.` };
			},
			(v) => ({ ratesError: v.message, ratesText: text })
		);
	},
	publish: async (event) => {
		const user = requireRole(event, 'buyer');
		return orFail(
			async () => {
				const outcome = await publish(user, event.params.id, requestContext(event));
				return {
					published: `Published. The event is open for bids; ${outcome.mailed} supplier contact${outcome.mailed === 1 ? '' : 's'} are being notified.`
				};
			},
			(v) => ({ publishError: v.message })
		);
	},
	amend: async (event) => {
		const user = requireRole(event, 'buyer');
		const form = await superValidate(event.request, zod4(amendmentSchema), { id: 'amend' });
		if (!form.valid) return fail(400, { amendForm: form });
		return orFieldError(
			form,
			{ known: ['summary', 'deadlineLocal', 'rates'], fallback: 'summary' },
			async () => {
				const row = await buyerEvent(user, event.params.id);
				const outcome = await amend(
					user,
					event.params.id,
					{
						summary: form.data.summary,
						description: form.data.description,
						deliveryPlace: form.data.deliveryPlace,
						// The field shows minutes: left as shown, it keeps the exact deadline rather than an earlier one.
						deadline:
							form.data.deadlineLocal === toLocalInput(row.deadline, row.time_zone)
								? row.deadline
								: deadlineFrom(form.data.deadlineLocal, row.time_zone),
						rates: form.data.rates
					},
					requestContext(event)
				);
				return message(
					form,
					`Amendment ${outcome.number} recorded and mailed to ${outcome.mailed} supplier contacts.`
				);
			}
		);
	}
};
