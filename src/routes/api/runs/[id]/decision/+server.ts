import { z } from 'zod';
import { api } from '$lib/server/api';
import { RuleViolation } from '$lib/server/services/errors';
import { decide } from '$lib/server/services/signoff';

const body = z.object({ decision: z.enum(['approve', 'return']), comment: z.string().max(4000).default('') });

/** An approver's decision on a submitted run: `{ decision: "approve" | "return", comment }`. */
export const POST = api(async (user, event) => {
	const parsed = body.safeParse(await event.request.json().catch(() => null));
	if (!parsed.success)
		throw new RuleViolation(
			'Send { "decision": "approve" | "return", "comment": "..." } as JSON.',
			undefined,
			400
		);
	const { signoff, notices } = await decide(
		user,
		event.params.id!,
		parsed.data.decision,
		parsed.data.comment
	);
	return { decision: signoff.decision, decidedAt: signoff.decided_at?.toISOString(), notices };
});
