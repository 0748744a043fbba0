import { fail } from '@sveltejs/kit';
import { message, setError, superValidate } from 'sveltekit-superforms';
import { zod4 } from 'sveltekit-superforms/adapters';
import { namesById } from '$lib/plan-suppliers';
import { planFormSchema } from '$lib/schemas/events';
import type { CautionKey } from '$lib/cautions';
import { requireRole } from '$lib/server/auth/guard';
import { orErrorPage, orFail, orFieldError } from '$lib/server/route-errors';
import { checkRules, listPlans, planSuppliers, savePlan } from '$lib/server/services/award-plans';
import { cancelRun, listRuns, startRun } from '$lib/server/services/award-runs';
import { planJson, runSummary } from '$lib/server/services/award-views';
import { planRefs } from '$lib/server/services/event-views';
import { buyerEvent } from '$lib/server/services/events';
import { submitRun } from '$lib/server/services/signoff';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	const row = await orErrorPage(event, () => buyerEvent(user, event.params.id));
	const [plans, runs, refs, suppliers] = await Promise.all([
		listPlans(user, row.id),
		listRuns(user, row.id),
		planRefs(user, row.id),
		planSuppliers(user, row.id)
	]);
	const cautions: CautionKey[] = ['decisionSupport', 'lateRuleChange'];
	const names = namesById(suppliers);
	return {
		cautions,
		planForm: await superValidate(zod4(planFormSchema), { id: 'plan' }),
		plans: plans.map((p) => planJson(p, row.currency, names)),
		runs: runs.map(runSummary),
		refs,
		suppliers
	};
};

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
		return orFieldError(form, { known: ['name'], fallback: 'rules' }, async () => {
			const plan = await savePlan(user, event.params.id, {
				id: form.data.planId || undefined,
				name: form.data.name,
				rules: rules.rules
			});
			return message(form, `Plan “${plan.name}” saved.`);
		});
	},
	run: async (event) => {
		const user = requireRole(event, 'buyer');
		const planId = String((await event.request.formData()).get('planId') ?? '');
		// The answer names the plan, so the page shows it under that plan's Run button.
		return orFail(
			async () => {
				const run = await startRun(user, planId, event.params.id);
				return { action: 'run' as const, planId, ok: `Run ${run.number} started.`, runId: run.id };
			},
			(v) => ({ action: 'run' as const, planId, error: v.message })
		);
	},
	submit: async (event) => {
		const user = requireRole(event, 'buyer');
		const data = await event.request.formData();
		const runId = String(data.get('runId') ?? '');
		const justification = String(data.get('justification') ?? '').slice(0, 8000);
		return orFail(async () => {
			await submitRun(user, runId, event.params.id, justification);
			return { ok: 'Submitted for sign-off. An approver other than you decides.' };
		});
	},
	cancel: async (event) => {
		const user = requireRole(event, 'buyer');
		const runId = String((await event.request.formData()).get('runId') ?? '');
		return orFail(
			async () => {
				await cancelRun(user, runId, event.params.id);
				return {
					action: 'cancel' as const,
					runId,
					ok: 'Cancelling the run: its status below shows when it stops.'
				};
			},
			(v) => ({ action: 'cancel' as const, runId, error: v.message })
		);
	}
};
