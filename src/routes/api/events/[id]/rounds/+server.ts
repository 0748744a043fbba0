import { isStaff } from '$lib/roles';
import { roundSchema } from '$lib/schemas/rounds';
import { api } from '$lib/server/api';
import { requestContext } from '$lib/server/request-context';
import { RuleViolation } from '$lib/server/services/errors';
import { roundChanges, staffRounds, startRound, supplierRounds } from '$lib/server/services/rounds';

/** Staff: the rounds after the first (who is invited, deadlines) and the change per supplier between the
 * last two opened rounds. A supplier: the rounds it is invited to, with its own feedback only. */
export const GET = api(async (user, event) => {
	const id = event.params.id!;
	if (!isStaff(user.role)) return { rounds: await supplierRounds(user, id) };
	const [rounds, changes] = await Promise.all([staffRounds(user, id), roundChanges(user, id)]);
	return { rounds, changes };
});

/** A buyer, after the opening: starts the next round. */
export const POST = api(async (user, event) => {
	let body: unknown;
	try {
		body = await event.request.json();
	} catch {
		throw new RuleViolation('Send the round as JSON.', undefined, 400);
	}
	const parsed = roundSchema.safeParse(body);
	if (!parsed.success) {
		const issue = parsed.error.issues[0]!;
		throw new RuleViolation(issue.message, String(issue.path[0] ?? ''), 422);
	}
	const round = await startRound(user, event.params.id!, parsed.data, requestContext(event));
	return new Response(
		JSON.stringify({ round: { number: round.number, deadline: round.deadline.toISOString() } }),
		{ status: 201, headers: { 'content-type': 'application/json' } }
	);
});
