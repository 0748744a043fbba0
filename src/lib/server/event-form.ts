import { eventSchema, type EventForm } from '$lib/schemas/events';
import { fromLocalInput, LocalTimeError, toLocalInput } from '$lib/time';
import type { EventFields, EventRow } from './db/events';
import { RuleViolation } from './services/errors';

export const timeZones = ['UTC', ...Intl.supportedValuesOf('timeZone').filter((z) => z !== 'UTC')];
export const currencies = Intl.supportedValuesOf('currency');

/** The deadline a form's wall-clock time names in the zone; a time the zone skips or repeats is a 422 on the field. */
export function deadlineFrom(local: string, timeZone: string): Date {
	try {
		return fromLocalInput(local, timeZone);
	} catch (error) {
		if (error instanceof LocalTimeError) throw new RuleViolation(error.message, 'deadlineLocal', 422);
		throw error;
	}
}

export function fieldsFromForm(form: EventForm): EventFields {
	return { ...form, deadline: deadlineFrom(form.deadlineLocal, form.timeZone) };
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
