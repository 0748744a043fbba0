import { fail } from '@sveltejs/kit';
import { message, setError, superValidate } from 'sveltekit-superforms';
import { zod4 } from 'sveltekit-superforms/adapters';
import { planFormSchema } from '$lib/schemas/events';
import type { CautionKey } from '$lib/cautions';
import { requireRole } from '$lib/server/auth/guard';
import { listInvitations, listItems } from '$lib/server/db/events';
import { db } from '$lib/server/db/knex';
import {
	cancelRun,
	checkRules,
	listPlans,
	listRuns,
	planJson,
	runJson,
	savePlan,
	startRun,
	submitRun
} from '$lib/server/services/awards';
import { RuleViolation } from '$lib/server/services/errors';
import { buyerEvent } from '$lib/server/services/events';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	const row = await buyerEvent(user, event.params.id);
	const [plans, runs, items, invitations] = await Promise.all([
		listPlans(user, row.id),
		listRuns(user, row.id),
		listItems(db(), row.id),
		listInvitations(db(), row.id)
	]);
	const cautions: CautionKey[] = ['decisionSupport', 'lateRuleChange'];
	return {
		cautions,
		planForm: await superValidate(zod4(planFormSchema), { id: 'plan' }),
		plans: plans.map((p) => planJson(p, row.currency)),
		runs: runs.map((r) => {
			const json = runJson(r);
			const result = json.result as { status?: string; totalCost?: number | null } | null;
			return { ...json, result: null, outcome: result?.status ?? null, totalCost: result?.totalCost ?? null };
		}),
		refs: {
			items: items.map((i) => i.ref),
			lots: [...new Set(items.map((i) => i.lot_ref).filter((l): l is string => Boolean(l)))],
			suppliers: invitations.map((i) => i.supplier_name),
			tags: [...new Set(invitations.flatMap((i) => i.tags))].sort()
		}
	};
};

async function attempt<T>(work: () => Promise<T>) {
	try {
		return await work();
	} catch (error) {
		if (error instanceof RuleViolation) return fail(error.status, { error: error.message });
		throw error;
	}
}

export const actions: Actions = {
	savePlan: async (event) => {
		const user = requireRole(event, 'buyer');
		const form = await superValidate(event.request, zod4(planFormSchema), { id: 'plan' });
		if (!form.valid) return fail(400, { form });
		let raw: unknown;
		try {
			raw = JSON.parse(form.data.rules);
		} catch {
			return setError(form, 'rules', 'The rules could not be read.');
		}
		const rules = checkRules(raw);
		if (!rules.ok) return setError(form, 'rules', rules.problems.join('; '), { status: 422 });
		try {
			const plan = await savePlan(user, event.params.id, {
				id: form.data.planId || undefined,
				name: form.data.name,
				rules: rules.rules
			});
			return message(form, `Plan “${plan.name}” saved.`);
		} catch (error) {
			if (error instanceof RuleViolation) {
				const field = error.field === 'name' ? 'name' : 'rules';
				return setError(form, field, error.message, { status: error.status });
			}
			throw error;
		}
	},
	run: async (event) => {
		const user = requireRole(event, 'buyer');
		const planId = String((await event.request.formData()).get('planId') ?? '');
		return attempt(async () => {
			const run = await startRun(user, planId, event.params.id);
			return { ok: `Run ${run.number} is queued.`, runId: run.id };
		});
	},
	submit: async (event) => {
		const user = requireRole(event, 'buyer');
		const runId = String((await event.request.formData()).get('runId') ?? '');
		return attempt(async () => {
			await submitRun(user, runId, event.params.id);
			return { ok: 'Submitted for sign-off. An approver other than you decides.' };
		});
	},
	cancel: async (event) => {
		const user = requireRole(event, 'buyer');
		const runId = String((await event.request.formData()).get('runId') ?? '');
		return attempt(async () => {
			await cancelRun(user, runId, event.params.id);
			return { ok: 'Cancelling the run.' };
		});
	}
};
