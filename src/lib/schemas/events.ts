// Forms of a sourcing event, shared by the pages (superforms) and the server.
import { z } from 'zod';

/** Incoterms 2020 rules (ICC): the delivery term of an event. */
export const INCOTERMS = [
	'EXW',
	'FCA',
	'CPT',
	'CIP',
	'DAP',
	'DPU',
	'DDP',
	'FAS',
	'FOB',
	'CFR',
	'CIF'
] as const;

/** Common UN/CEFACT Recommendation 20 unit codes offered as suggestions; any well-formed code is accepted. */
export const COMMON_UNITS: { code: string; name: string }[] = [
	{ code: 'C62', name: 'one (unit)' },
	{ code: 'H87', name: 'piece' },
	{ code: 'SET', name: 'set' },
	{ code: 'PR', name: 'pair' },
	{ code: 'KGM', name: 'kilogram' },
	{ code: 'TNE', name: 'tonne' },
	{ code: 'MTR', name: 'metre' },
	{ code: 'MTK', name: 'square metre' },
	{ code: 'MTQ', name: 'cubic metre' },
	{ code: 'LTR', name: 'litre' },
	{ code: 'HUR', name: 'hour' },
	{ code: 'DAY', name: 'day' },
	{ code: 'MON', name: 'month' },
	{ code: 'KWH', name: 'kilowatt hour' }
];

export const UNIT_CODE = /^[A-Z0-9]{2,3}$/;

const currencies = new Set(Intl.supportedValuesOf('currency'));
const timeZones = new Set([...Intl.supportedValuesOf('timeZone'), 'UTC']);

export const eventSchema = z.object({
	reference: z
		.string()
		.trim()
		.min(1, 'Give the event a reference.')
		.max(40, 'At most 40 characters.')
		.regex(
			/^[A-Za-z0-9][A-Za-z0-9._/-]*$/,
			'Letters, digits and . _ / - only, starting with a letter or digit.'
		),
	title: z.string().trim().min(1, 'Give the event a title.').max(200, 'At most 200 characters.'),
	description: z.string().trim().max(5000, 'At most 5000 characters.').default(''),
	currency: z
		.string()
		.trim()
		.toUpperCase()
		.refine((c) => currencies.has(c), 'An ISO 4217 currency code, such as EUR or USD.'),
	incoterm: z.enum(INCOTERMS, 'Choose an Incoterms 2020 rule.'),
	deliveryPlace: z.string().trim().max(200, 'At most 200 characters.').default(''),
	deadlineLocal: z
		.string()
		.regex(/^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}$/, 'Give a date and time for the deadline.'),
	timeZone: z.string().refine((tz) => timeZones.has(tz), 'Choose a time zone from the list.'),
	bidValidityDays: z.coerce
		.number('A number of days.')
		.int('A whole number of days.')
		.min(1, 'At least 1 day.')
		.max(730, 'At most 730 days.')
		.default(90),
	allowPriceBreaks: z.boolean().default(false),
	allowCapacity: z.boolean().default(false),
	allowBundles: z.boolean().default(false),
	allowPackSizes: z.boolean().default(false)
});
export type EventForm = z.infer<typeof eventSchema>;

export const inviteSupplierSchema = z
	.object({
		supplierOrganisationId: z.string().default(''),
		email: z.union([z.literal(''), z.email('A valid e-mail address.')]).default(''),
		name: z.string().trim().max(120).default(''),
		newSupplierName: z.string().trim().max(120).default('')
	})
	.refine((v) => v.supplierOrganisationId || (v.email && v.newSupplierName), {
		message: 'Choose a supplier, or give a new supplier’s organisation name and a contact e-mail address.',
		path: ['supplierOrganisationId']
	});

export const amendmentSchema = z.object({
	summary: z.string().trim().min(1, 'Say what changes and why.').max(2000, 'At most 2000 characters.'),
	description: z.string().trim().max(5000, 'At most 5000 characters.'),
	deliveryPlace: z.string().trim().max(200, 'At most 200 characters.'),
	deadlineLocal: z
		.string()
		.regex(/^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}$/, 'Give a date and time for the deadline.'),
	/** The exchange-rate table, one rate per line ($lib/currencies parseRateTable). */
	rates: z.string().max(5000, 'At most 5000 characters.').default('')
});

export const questionSchema = z.object({
	text: z.string().trim().min(1, 'Write your question.').max(4000, 'At most 4000 characters.')
});

export const answerSchema = z.object({
	questionId: z.string().uuid(),
	publishedQuestion: z
		.string()
		.trim()
		.min(1, 'The question as all suppliers will read it (remove anything that names the asker).')
		.max(4000),
	answer: z.string().trim().min(1, 'Write the answer.').max(8000)
});

/** An award plan as the plan form sends it: the rules as JSON text, checked against the engine's schema. */
export const planFormSchema = z.object({
	planId: z.string().default(''),
	name: z.string().trim().min(1, 'Give the plan a name.').max(120, 'At most 120 characters.'),
	rules: z.string().default('[]')
});
