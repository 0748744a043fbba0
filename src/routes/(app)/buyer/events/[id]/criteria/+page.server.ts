import { fail } from '@sveltejs/kit';
import type { CautionKey } from '$lib/cautions';
import { describeCriterion, RANK_REVERSAL_CAUTION } from '$lib/evaluation/criteria';
import { formatMoney, formatQuantity } from '$lib/format';
import { criterionRowSchema, scoreSchema } from '$lib/schemas/criteria';
import { requireRole } from '$lib/server/auth/guard';
import { orErrorPage, orFail } from '$lib/server/route-errors';
import { criteriaPage, saveCriteria, scoreCriterion, type Criterion } from '$lib/server/services/criteria';
import type { Actions, PageServerLoad } from './$types';

const FIELDS = ['ref', 'name', 'unit', 'answeredBy', 'basis', 'rate', 'threshold', 'direction'] as const;

/** The score form's field a refusal names (the schema's keys, or the service's short names). */
function scoreFieldOf(field: string): 'criterion' | 'supplier' | 'value' | 'comment' | undefined {
	if (field === 'criterionRef' || field === 'criterion') return 'criterion';
	if (field === 'supplierOrganisationId' || field === 'supplier') return 'supplier';
	if (field === 'value' || field === 'comment') return field;
	return undefined;
}

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	const weight = Number(event.url.searchParams.get('weight') ?? '50');
	const priceWeight = Number.isFinite(weight) ? Math.min(100, Math.max(0, weight)) : 50;
	const page = await orErrorPage(event, () =>
		criteriaPage(user, event.params.id, {
			priceWeight: priceWeight / 100,
			quality: event.url.searchParams.get('quality')
		})
	);
	const money = (v: number) => formatMoney(v, page.event.currency);
	const criteria = page.criteria.map((c) => ({ ...c, rule: describeCriterion(c, money) }));
	if (page.sealed) return { draft: page.event.state === 'draft', sealed: true as const, criteria };
	const score = (v: number) => formatQuantity(Math.round(v * 100) / 100);
	const cautions: CautionKey[] = ['rankReversal', 'decisionSupport'];
	return {
		cautions,
		draft: false,
		sealed: false as const,
		criteria,
		suppliers: page.evaluations.map((e) => ({
			id: e.supplierOrganisationId,
			name: e.supplierName,
			values: Object.fromEntries(Object.entries(e.values).map(([k, v]) => [k, formatQuantity(v)])),
			percent: `${e.adjustment.percentOfPrice}%`,
			perUnit: money(e.adjustment.perUnit),
			perSupplier: money(e.adjustment.perSupplier),
			missing: e.missing
		})),
		scores: page.scores.map((s) => ({
			criterion: s.criterion_ref,
			supplier: s.supplier_organisation_id,
			value: formatQuantity(Number(s.value)),
			comment: s.comment,
			by: s.scorer_name ?? `user ${s.scored_by}`,
			at: s.scored_at.toISOString()
		})),
		caution: RANK_REVERSAL_CAUTION,
		priceWeight,
		quality: page.quality,
		relative: page.relative && {
			scores: page.relative.scores.map((s) => ({
				supplier: s.supplier,
				price: money(s.price),
				quality: formatQuantity(s.quality),
				score: score(s.score)
			})),
			reversals: page.relative.reversals.map(
				(r) =>
					`Without ${r.removed}'s bid, ${r.behind} would rank ahead of ${r.ahead}: ${r.ahead} ${score(r.before.ahead)} against ${r.behind} ${score(r.before.behind)} with every bid in, ${score(r.after.ahead)} against ${score(r.after.behind)} without it.`
			)
		}
	};
};

export const actions: Actions = {
	save: async (event) => {
		const user = requireRole(event, 'buyer');
		const data = await event.request.formData();
		const column = (name: string) => data.getAll(name).map((v) => (typeof v === 'string' ? v : ''));
		const columns = Object.fromEntries(FIELDS.map((f) => [f, column(f)]));
		// Every row as typed, to put back in the form when the save is refused: nothing typed is lost.
		const typed = columns.ref!.map((_, k) =>
			Object.fromEntries(FIELDS.map((f) => [f, columns[f]![k] ?? '']))
		);
		const criteria: Criterion[] = [];
		// The form's row of each criterion kept (empty rows are skipped), to name the refused cell.
		const rowOf: number[] = [];
		for (let k = 0; k < columns.ref!.length; k++) {
			const row = Object.fromEntries(FIELDS.map((f) => [f, columns[f]![k] ?? '']));
			if (!row.ref!.trim() && !row.name!.trim()) continue;
			const parsed = criterionRowSchema.safeParse(row);
			if (!parsed.success) {
				const issue = parsed.error.issues[0]!;
				return fail(400, {
					saveError: `Criterion ${k + 1}: ${issue.message}.`,
					saveField: `criteria[${k}].${String(issue.path[0] ?? 'ref')}`,
					typed
				});
			}
			criteria.push(parsed.data);
			rowOf.push(k);
		}
		return orFail(
			async () => {
				await saveCriteria(user, event.params.id, criteria);
				return { saved: `Saved ${criteria.length} criteri${criteria.length === 1 ? 'on' : 'a'}.` };
			},
			(v) => ({
				typed,
				saveError: v.message,
				// The service counts the criteria kept; the form, its rows.
				saveField: v.field?.replace(
					/^criteria\[(\d+)\]/,
					(_, i: string) => `criteria[${rowOf[Number(i)] ?? i}]`
				)
			})
		);
	},
	score: async (event) => {
		const user = requireRole(event, 'buyer');
		const parsed = scoreSchema.safeParse(Object.fromEntries(await event.request.formData()));
		if (!parsed.success) {
			const issue = parsed.error.issues[0]!;
			return fail(400, { scoreError: issue.message, scoreField: scoreFieldOf(String(issue.path[0] ?? '')) });
		}
		return orFail(
			async () => {
				await scoreCriterion(user, event.params.id, parsed.data);
				return { scored: 'Score recorded in the decision trail.' };
			},
			(v) => ({ scoreError: v.message, scoreField: scoreFieldOf(v.field ?? '') })
		);
	}
};
