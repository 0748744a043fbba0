import { z } from 'zod';
import { api } from '$lib/server/api';
import { RuleViolation } from '$lib/server/services/errors';
import {
	changeRequestSchema,
	previewAdjustment,
	saveAdjustedRun
} from '$lib/server/services/run-adjustments';

const body = z.object({
	changes: z
		.array(z.intersection(changeRequestSchema, z.object({ justification: z.string().max(4000).optional() })))
		.min(1, 'must list at least one change')
		.max(200, 'must list at most 200 changes'),
	save: z.boolean().optional()
});

/**
 * Changes to a run's allocation by hand: `{ changes }` answers with the preview (new total, each change's
 * cost, the rules broken); `{ changes, save: true }` solves the rest again with the changes fixed and
 * queues the result as a new run (`202 { runId, number }`).
 */
export const POST = api(async (user, event) => {
	const parsed = body.safeParse(await event.request.json().catch(() => null));
	if (!parsed.success) {
		const issue = parsed.error.issues[0];
		const where = issue?.path.length ? `${issue.path.join('.')}: ` : '';
		throw new RuleViolation(
			`${where}${issue?.message ?? 'send { "changes": [...] } as JSON'}`,
			String(issue?.path[0] ?? 'changes'),
			422
		);
	}
	const { changes, save } = parsed.data;
	if (!save) return previewAdjustment(user, event.params.id!, undefined, changes);
	const run = await saveAdjustedRun(user, event.params.id!, undefined, changes);
	return new Response(JSON.stringify({ runId: run.id, number: run.number, status: run.status }), {
		status: 202,
		headers: { 'content-type': 'application/json' }
	});
});
