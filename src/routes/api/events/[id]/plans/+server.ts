import { json } from '@sveltejs/kit';
import { z } from 'zod';
import { namesById } from '$lib/plan-suppliers';
import { api } from '$lib/server/api';
import { RuleViolation } from '$lib/server/services/errors';
import { eventFor } from '$lib/server/services/events';
import { checkRules, listPlans, savePlan, planSuppliers } from '$lib/server/services/award-plans';
import { planJson } from '$lib/server/services/award-views';

export const GET = api(async (user, event) => {
	const { event: row } = await eventFor(user, event.params.id!);
	const [plans, suppliers] = await Promise.all([
		listPlans(user, event.params.id!),
		planSuppliers(user, event.params.id!)
	]);
	return { plans: plans.map((p) => planJson(p, row.currency, namesById(suppliers))) };
});

const body = z.object({ name: z.string().trim().min(1).max(120), rules: z.array(z.unknown()).default([]) });

/**
 * A new plan: `{ name, rules }` with rules as in docs/award-engine.md, a supplier by its organisation id
 * or exact name (stored as the id); 201, or 422 with every problem.
 */
export const POST = api(async (user, event) => {
	const parsed = body.safeParse(await event.request.json().catch(() => null));
	if (!parsed.success)
		throw new RuleViolation('Send { "name": "...", "rules": [...] } as JSON.', undefined, 400);
	const rules = checkRules(parsed.data.rules);
	if (!rules.ok)
		return json({ message: 'The rules are not valid.', problems: rules.problems }, { status: 422 });
	const { event: row } = await eventFor(user, event.params.id!);
	const plan = await savePlan(user, event.params.id!, { name: parsed.data.name, rules: rules.rules });
	const names = namesById(await planSuppliers(user, event.params.id!));
	return json({ plan: planJson(plan, row.currency, names) }, { status: 201 });
});
