import { fail, redirect } from '@sveltejs/kit';
import { z } from 'zod';
import type { CautionKey } from '$lib/cautions';
import { requireRole } from '$lib/server/auth/guard';
import { orErrorPage } from '$lib/server/route-errors';
import { findRun } from '$lib/server/services/award-runs';
import { RuleViolation } from '$lib/server/services/errors';
import {
	changeRequestSchema,
	previewAdjustment,
	saveAdjustedRun,
	type ChangeRequest,
	type Preview
} from '$lib/server/services/run-adjustments';
import type { Actions, PageServerLoad } from './$types';

/** Changes in one adjusted run, as the API allows. */
const MOST_CHANGES = 200;

/** Item refs offered as suggestions while typing (a longer list is typed without them). */
const SUGGESTED_ITEMS = 2000;

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	const { run } = await orErrorPage(event, () => findRun(user, event.params.runId, event.params.id));
	const cautions: CautionKey[] = ['decisionSupport'];
	return {
		run: {
			id: run.id,
			number: run.number,
			plan: run.plan_name,
			status: run.status,
			currency: run.problem.currency,
			totalCost: run.result?.totalCost ?? null,
			adjustable: run.status === 'done' && run.result?.totalCost != null
		},
		suppliers: run.problem.suppliers.map((s) => s.ref),
		items: run.problem.items.length <= SUGGESTED_ITEMS ? run.problem.items.map((i) => i.ref) : [],
		cautions
	};
};

const storedChanges = z.array(
	z.intersection(changeRequestSchema, z.object({ justification: z.string().max(4000).optional() }))
);

/** The changes so far (a hidden field the server wrote), with the justifications as typed since. */
function changesOf(form: FormData): ChangeRequest[] {
	let stored: unknown;
	try {
		stored = JSON.parse(String(form.get('changes') ?? '[]'));
	} catch {
		throw new RuleViolation('The list of changes was damaged; start again from the run.', 'changes', 400);
	}
	const parsed = storedChanges.safeParse(stored);
	if (!parsed.success)
		throw new RuleViolation('The list of changes was damaged; start again from the run.', 'changes', 400);
	if (parsed.data.length > MOST_CHANGES)
		throw new RuleViolation(`At most ${MOST_CHANGES} changes at a time; save these first.`, 'changes', 422);
	return parsed.data.map((change, k) => ({
		...change,
		justification: String(form.get(`justification${k}`) ?? change.justification ?? '')
	}));
}

/** The change the buyer is adding, checked field by field. */
function newChange(form: FormData): ChangeRequest {
	const kind = String(form.get('kind') ?? '');
	const item = String(form.get('item') ?? '').trim();
	const supplier = String(form.get('supplier') ?? '');
	if (!item) throw new RuleViolation('Give the item’s ref.', 'item', 422);
	if (!supplier) throw new RuleViolation('Choose a supplier.', 'supplier', 422);
	if (kind === 'move') {
		const to = String(form.get('to') ?? '');
		const text = String(form.get('quantity') ?? '').trim();
		const quantity = Number(text.replace(/,/g, ''));
		if (!to) throw new RuleViolation('Choose the supplier the quantity moves to.', 'to', 422);
		if (!text || !Number.isFinite(quantity) || quantity <= 0)
			throw new RuleViolation(
				`The quantity to move must be a number above 0${text ? `, not "${text}"` : ''}.`,
				'quantity',
				422
			);
		return { kind, item, supplier, to, quantity };
	}
	if (kind === 'lock' || kind === 'exclude') return { kind, item, supplier };
	throw new RuleViolation('Choose what the change does.', 'kind', 422);
}

async function answer(
	event: Parameters<Actions[string]>[0],
	work: (form: FormData, user: ReturnType<typeof requireRole>) => Promise<ChangeRequest[]>
) {
	const user = requireRole(event, 'buyer');
	const form = await event.request.formData();
	let changes: ChangeRequest[] = [];
	try {
		changes = changesOf(form);
		changes = await work(form, user);
		const preview: Preview | null = changes.length
			? await previewAdjustment(user, event.params.runId!, event.params.id!, changes)
			: null;
		return { changes, preview };
	} catch (error) {
		if (!(error instanceof RuleViolation)) throw error;
		// The list as it stood, priced if it can be: the error is about the newest step only.
		const preview = changes.length
			? await previewAdjustment(user, event.params.runId!, event.params.id!, changes).catch(() => null)
			: null;
		return fail(error.status, { changes, preview, error: error.message, field: error.field ?? null });
	}
}

export const actions: Actions = {
	add: (event) =>
		answer(event, async (form) => {
			const changes = changesOf(form);
			if (changes.length >= MOST_CHANGES)
				throw new RuleViolation(
					`At most ${MOST_CHANGES} changes at a time; save these first.`,
					'changes',
					422
				);
			return [...changes, newChange(form)];
		}),
	remove: (event) =>
		answer(event, async (form) => {
			const changes = changesOf(form);
			const k = Number(form.get('remove'));
			return changes.filter((_, j) => j !== k);
		}),
	save: async (event) => {
		const user = requireRole(event, 'buyer');
		const form = await event.request.formData();
		let changes: ChangeRequest[] = [];
		let run;
		try {
			changes = changesOf(form);
			run = await saveAdjustedRun(user, event.params.runId, event.params.id, changes);
		} catch (error) {
			if (!(error instanceof RuleViolation)) throw error;
			const preview = changes.length
				? await previewAdjustment(user, event.params.runId, event.params.id, changes).catch(() => null)
				: null;
			return fail(error.status, { changes, preview, error: error.message, field: error.field ?? null });
		}
		redirect(303, `/buyer/events/${event.params.id}/award/runs/${run.id}`);
	}
};
