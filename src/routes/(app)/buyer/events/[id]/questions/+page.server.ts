import { fail } from '@sveltejs/kit';
import { answerSchema } from '$lib/schemas/events';
import { requireRole } from '$lib/server/auth/guard';
import { requestContext } from '$lib/server/request-context';
import { orErrorPage, orFail } from '$lib/server/route-errors';
import { eventDetail } from '$lib/server/services/event-views';
import { answer } from '$lib/server/services/events';
import type { Actions, PageServerLoad } from './$types';

/** The questions, beside the layout's header. */
export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	return { detail: await orErrorPage(event, () => eventDetail(user, event.params.id)) };
};

export const actions: Actions = {
	answer: async (event) => {
		const user = requireRole(event, 'buyer');
		const parsed = answerSchema.safeParse(Object.fromEntries(await event.request.formData()));
		if (!parsed.success)
			return fail(400, { questionId: null, error: parsed.error.issues.map((i) => i.message).join(' ') });
		const questionId = parsed.data.questionId;
		return orFail(
			async () => {
				const outcome = await answer(user, event.params.id, parsed.data, requestContext(event));
				return { questionId, ok: `Answer published and mailed to ${outcome.mailed} supplier contacts.` };
			},
			(v) => ({ questionId, error: v.message })
		);
	}
};
