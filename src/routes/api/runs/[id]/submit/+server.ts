import { api } from '$lib/server/api';
import { submitRunSchema } from '$lib/schemas/signoff';
import { RuleViolation } from '$lib/server/services/errors';
import { submitRun } from '$lib/server/services/signoff';

/** Submits a run for sign-off: `{ justification }` as JSON (10 to 4,000 characters, trimmed). */
export const POST = api(async (user, event) => {
	const parsed = submitRunSchema.safeParse(await event.request.json().catch(() => null));
	if (!parsed.success) {
		const issue = parsed.error.issues[0];
		throw new RuleViolation(
			issue?.path[0] === 'justification'
				? issue.message
				: 'Send { "justification": "why this run should be awarded" } as JSON.',
			'justification',
			422
		);
	}
	const signoff = await submitRun(user, event.params.id!, undefined, parsed.data.justification);
	return { signoffId: signoff.id, boundHash: signoff.bound_hash.trim(), state: 'awaiting_signoff' };
});
