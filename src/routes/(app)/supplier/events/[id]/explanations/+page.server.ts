import { requireRole } from '$lib/server/auth/guard';
import { orErrorPage, orFail } from '$lib/server/route-errors';
import { answerAsSupplier, supplierInquiries } from '$lib/server/services/abnormally-low';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'supplier');
	const { event: row, inquiries } = await orErrorPage(event, () => supplierInquiries(user, event.params.id));
	return {
		title: row.reference,
		event: { id: row.id, reference: row.reference, title: row.title, timeZone: row.time_zone },
		inquiries: inquiries.map((q) => ({
			id: q.id,
			item: q.item_ref,
			question: q.question,
			askedAt: q.asked_at.toISOString(),
			answer: q.answer,
			answeredAt: q.answered_at?.toISOString() ?? null
		}))
	};
};

export const actions: Actions = {
	answer: async (event) => {
		const user = requireRole(event, 'supplier');
		const form = await event.request.formData();
		const values = {
			inquiry: String(form.get('inquiry') ?? '').slice(0, 100),
			answer: String(form.get('answer') ?? '').slice(0, 10_000)
		};
		return orFail(
			async () => {
				await answerAsSupplier(user, event.params.id, values);
				return { ok: 'Your answer is recorded and the buyer can read it.' };
			},
			(v) => ({ error: v.message, field: v.field ?? null, values })
		);
	}
};
