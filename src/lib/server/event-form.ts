import { eventSchema, type EventForm } from '$lib/schemas/events';
import { fromLocalInput, toLocalInput } from '$lib/time';
import type { EventFields, EventRow } from './db/events';

export const timeZones = ['UTC', ...Intl.supportedValuesOf('timeZone').filter((z) => z !== 'UTC')];
export const currencies = Intl.supportedValuesOf('currency');

export function fieldsFromForm(form: EventForm): EventFields {
	return { ...form, deadline: fromLocalInput(form.deadlineLocal, form.timeZone) };
}

export function formFromEvent(event: EventRow): EventForm {
	return {
		reference: event.reference,
		title: event.title,
		description: event.description,
		currency: event.currency,
		incoterm: event.incoterm as EventForm['incoterm'],
		deliveryPlace: event.delivery_place,
		deadlineLocal: toLocalInput(event.deadline, event.time_zone),
		timeZone: event.time_zone,
		bidValidityDays: event.bid_validity_days,
		allowPriceBreaks: event.allow_price_breaks,
		allowCapacity: event.allow_capacity,
		allowBundles: event.allow_bundles,
		allowPackSizes: event.allow_pack_sizes
	};
}

export { eventSchema };
