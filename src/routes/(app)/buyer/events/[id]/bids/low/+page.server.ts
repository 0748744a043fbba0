import { requireRole } from '$lib/server/auth/guard';
import { requestContext } from '$lib/server/request-context';
import { orErrorPage, orFail } from '$lib/server/route-errors';
import {
	askExplanation,
	excludeBid,
	lowPriceReview,
	recordExplanation,
	undoExclusion
} from '$lib/server/services/abnormally-low';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	const review = await orErrorPage(event, () => lowPriceReview(user, event.params.id));
	const iso = (d: Date | null) => (d === null ? null : d.toISOString());
	return {
		cautions: ['abnormallyLow' as const],
		flags: review.flags.map((f) => ({
			supplierId: f.supplierId,
			supplier: f.supplier,
			item: f.item,
			text: f.text
		})),
		suppliers: review.suppliers,
		items: review.items,
		inquiries: review.inquiries.map((q) => ({
			id: q.id,
			supplier: q.supplier,
			item: q.item_ref,
			question: q.question,
			askedAt: q.asked_at.toISOString(),
			answer: q.answer,
			answeredAt: iso(q.answered_at)
		})),
		exclusions: review.exclusions.map((x) => ({
			id: x.id,
			supplier: x.supplier,
			item: x.item_ref,
			reason: x.reason,
			excludedAt: x.excluded_at.toISOString(),
			undoReason: x.undo_reason,
			undoneAt: iso(x.undone_at)
		}))
	};
};

/** The form's fields as typed, so a refused form comes back filled in. */
async function fieldsOf(request: Request): Promise<Record<string, string>> {
	const form = await request.formData();
	return Object.fromEntries(
		[...form.entries()].flatMap(([k, v]) => (typeof v === 'string' ? [[k, v.slice(0, 10_000)]] : []))
	);
}

const refused =
	(action: string, values: Record<string, string>) => (v: { message: string; field?: string }) => ({
		action,
		error: v.message,
		field: v.field ?? null,
		values
	});

export const actions: Actions = {
	ask: async (event) => {
		const user = requireRole(event, 'buyer');
		const values = await fieldsOf(event.request);
		return orFail(
			async () => {
				const { mailed } = await askExplanation(user, event.params.id, values, requestContext(event));
				return {
					action: 'ask',
					ok: `Request recorded and mailed to ${mailed} contact${mailed === 1 ? '' : 's'} at the supplier.`
				};
			},
			refused('ask', values)
		);
	},
	answer: async (event) => {
		const user = requireRole(event, 'buyer');
		const values = await fieldsOf(event.request);
		return orFail(
			async () => {
				await recordExplanation(user, event.params.id, values);
				return { action: 'answer', ok: 'Answer recorded in the decision trail.' };
			},
			refused(`answer-${values.inquiry ?? ''}`, values)
		);
	},
	exclude: async (event) => {
		const user = requireRole(event, 'buyer');
		const values = await fieldsOf(event.request);
		return orFail(
			async () => {
				await excludeBid(user, event.params.id, values);
				return { action: 'exclude', ok: 'Excluded: runs started from now on leave it out.' };
			},
			refused('exclude', values)
		);
	},
	undo: async (event) => {
		const user = requireRole(event, 'buyer');
		const values = await fieldsOf(event.request);
		return orFail(
			async () => {
				await undoExclusion(user, event.params.id, values);
				return { action: 'undo', ok: 'Exclusion undone: runs started from now on include it again.' };
			},
			refused(`undo-${values.exclusion ?? ''}`, values)
		);
	}
};
