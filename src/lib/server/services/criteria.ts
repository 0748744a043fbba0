// Non-price criteria as money (src/lib/evaluation/criteria.ts): the buyer sets them on the draft (locked
// at publication, as the items are), suppliers answer theirs with each bid, buyers score theirs per
// supplier after the opening (each score in the decision trail), and each supplier's answers and scores
// become the money added to its prices in the award problem.
import {
	adjustmentOf,
	rankReversals,
	relativeScores,
	type Adjustment,
	type Criterion,
	type RankReversal
} from '$lib/evaluation/criteria';
import { evaluatedSupplierTotals } from '$lib/evaluation/apply-criteria';
import type { EventRate } from '$lib/currencies';
import { formatMoney } from '$lib/format';
import type { SessionUser } from '../auth/session-user';
import { now } from '../clock';
import { visibleBids, type VisibleBid } from '../db/bids';
import { findRun } from '../db/awards';
import {
	insertScore,
	latestScores,
	listCriteria,
	replaceCriteria,
	runHasCriteria,
	currentAnswers,
	type ScoreRow
} from '../db/criteria';
import { listRates } from '../db/currencies';
import { listInvitations, listItems } from '../db/events';
import { db } from '../db/knex';
import { appendTrail } from '../trail';
import type { Tabulated } from '../tabulation';
import { bidsInEventCurrency } from './currencies';
import { RuleViolation } from './errors';
import { effectiveState, eventFor, evaluationEvent, lockedDraft } from './events';

export type { Criterion } from '$lib/evaluation/criteria';

const REF = /^[A-Za-z0-9][A-Za-z0-9_.-]{0,39}$/;

/** The criteria of an event, for anyone who may read the event (suppliers answer them). */
export async function eventCriteria(user: SessionUser, eventId: string): Promise<Criterion[]> {
	await eventFor(user, eventId);
	return listCriteria(db(), eventId);
}

/** Checks a draft's whole list of criteria: a refusal names the row and the field. */
export function checkCriteria(criteria: Criterion[]): void {
	const seen = new Set<string>();
	criteria.forEach((c, i) => {
		const where = `Criterion ${i + 1}`;
		if (!REF.test(c.ref))
			throw new RuleViolation(
				`${where}: the ref must be 1 to 40 letters, digits, dots, dashes or underscores.`,
				`criteria[${i}].ref`
			);
		if (seen.has(c.ref))
			throw new RuleViolation(`${where}: the ref "${c.ref}" is used twice.`, `criteria[${i}].ref`);
		seen.add(c.ref);
		if (!c.name.trim() || c.name.length > 200)
			throw new RuleViolation(`${where}: the name must be 1 to 200 characters.`, `criteria[${i}].name`);
		if (!Number.isFinite(c.rate) || c.rate < 0 || c.rate >= 1e14)
			throw new RuleViolation(
				`${where}: the money per point must be a number of 0 or more.`,
				`criteria[${i}].rate`
			);
		if (c.basis === 'percent_of_price' && c.rate > 100)
			throw new RuleViolation(`${where}: a percentage per point must be at most 100.`, `criteria[${i}].rate`);
		if (!Number.isFinite(c.threshold) || Math.abs(c.threshold) >= 1e14)
			throw new RuleViolation(`${where}: the threshold must be a number.`, `criteria[${i}].threshold`);
	});
}

/** Replaces a draft's criteria; refused once the event is published (and by a trigger then too). */
export async function saveCriteria(
	actor: SessionUser,
	eventId: string,
	criteria: Criterion[]
): Promise<void> {
	checkCriteria(criteria);
	await db().transaction(async (trx) => {
		await lockedDraft(trx, actor, eventId);
		await replaceCriteria(trx, eventId, criteria);
		await appendTrail(trx, { eventId, actor, action: 'evaluation criteria saved', detail: { criteria } });
	});
}

/** A buyer's score of an evaluator-answered criterion for one supplier, after the opening. */
export async function scoreCriterion(
	actor: SessionUser,
	eventId: string,
	score: { criterionRef: string; supplierOrganisationId: string; value: number; comment: string }
): Promise<void> {
	const event = await evaluationEvent(actor, eventId);
	if (actor.role !== 'buyer') throw new RuleViolation('Only buyers score criteria.', undefined, 403);
	if (['draft', 'open'].includes(effectiveState(event)))
		throw new RuleViolation(
			'Bids are sealed until the deadline: scores are given after the opening.',
			undefined,
			409
		);
	if (event.state === 'awarded') throw new RuleViolation('The event is awarded already.', undefined, 409);
	const criterion = (await listCriteria(db(), eventId)).find((c) => c.ref === score.criterionRef);
	if (!criterion || criterion.answeredBy !== 'evaluator')
		throw new RuleViolation('There is no such criterion for evaluators to score.', 'criterion', 404);
	if (!Number.isFinite(score.value) || score.value < 0 || score.value >= 1e14)
		throw new RuleViolation('The score must be a number of 0 or more.', 'value');
	const comment = score.comment.trim();
	if (!comment || comment.length > 2000)
		throw new RuleViolation('Give the reason for the score (up to 2,000 characters).', 'comment');
	const at = now();
	await db().transaction(async (trx) => {
		const invitations = await listInvitations(trx, eventId);
		if (!invitations.some((i) => i.supplier_organisation_id === score.supplierOrganisationId))
			throw new RuleViolation('That supplier is not invited to the event.', 'supplier', 404);
		await insertScore(trx, {
			eventId,
			criterionRef: criterion.ref,
			supplierOrganisationId: score.supplierOrganisationId,
			value: score.value,
			comment,
			scoredBy: actor.id,
			scoredAt: at
		});
		await appendTrail(trx, {
			eventId,
			actor,
			action: 'criterion scored',
			detail: {
				criterion: criterion.ref,
				supplier: score.supplierOrganisationId,
				value: score.value,
				comment
			}
		});
	});
}

export interface SupplierEvaluation {
	supplierOrganisationId: string;
	supplierName: string;
	/** Answers and scores by criterion ref. */
	values: Record<string, number>;
	adjustment: Adjustment;
	/** Criteria with no answer or score yet. */
	missing: string[];
}

/** Each live bid's values and money: its own answers, and the latest evaluators' scores. */
export function evaluations(
	criteria: Criterion[],
	bids: Pick<VisibleBid, 'supplierOrganisationId' | 'supplierName' | 'source' | 'answers'>[],
	scores: Pick<ScoreRow, 'criterion_ref' | 'supplier_organisation_id' | 'value'>[]
): SupplierEvaluation[] {
	return bids
		.filter((b) => b.source !== 'withdrawal')
		.map((b) => {
			const values: Record<string, number> = {};
			for (const c of criteria.filter((c) => c.answeredBy === 'supplier'))
				if (b.answers[c.ref] !== undefined) values[c.ref] = b.answers[c.ref]!;
			for (const s of scores)
				if (s.supplier_organisation_id === b.supplierOrganisationId) {
					const c = criteria.find((c) => c.ref === s.criterion_ref);
					if (c?.answeredBy === 'evaluator') values[c.ref] = Number(s.value);
				}
			const { adjustment, missing } = adjustmentOf(criteria, values);
			return {
				supplierOrganisationId: b.supplierOrganisationId,
				supplierName: b.supplierName,
				values,
				adjustment,
				missing
			};
		});
}

/**
 * The money of each supplier for an award run, by supplier name (the engine's refs). A run waits for
 * every answer and score: a criterion left out would favour the supplier missing it.
 */
export async function runAdjustments(eventId: string, bids: VisibleBid[]): Promise<Map<string, Adjustment>> {
	const criteria = await listCriteria(db(), eventId);
	if (!criteria.length) return new Map();
	const list = evaluations(criteria, bids, await latestScores(db(), eventId));
	const missing = list.filter((e) => e.missing.length);
	if (missing.length)
		throw new RuleViolation(
			`Score or answer every criterion before a run: ${missing
				.slice(0, 5)
				.map((e) => `${e.supplierName} has none for ${e.missing.join(', ')}`)
				.join('; ')}.`,
			undefined,
			422
		);
	return new Map(list.map((e) => [e.supplierName, e.adjustment]));
}

export interface CriteriaDesk {
	criteria: Criterion[];
	evaluations: SupplierEvaluation[];
	scores: ScoreRow[];
}

/** What the tabulation shows of the criteria: each supplier's answers, scores and money. */
export async function criteriaDesk(eventId: string, bids: VisibleBid[]): Promise<CriteriaDesk> {
	const [criteria, scores] = await Promise.all([listCriteria(db(), eventId), latestScores(db(), eventId)]);
	return { criteria, evaluations: criteria.length ? evaluations(criteria, bids, scores) : [], scores };
}

/**
 * The relative-scoring view: each supplier's total price over the items it bid, against quality points
 * from one criterion, with the reversals that removing one bid would cause. Only suppliers that bid
 * every item are compared (a total over fewer items is not the same purchase). Prices are compared in the
 * event currency at the event's fixed rates (as the tabulation and the runs compare them).
 */
export function relativeView(
	bids: readonly VisibleBid[],
	quantities: Map<string, number>,
	points: Map<string, number>,
	priceWeight: number,
	money: { currency: string; rates: readonly EventRate[] }
): {
	scores: { supplier: string; price: number; quality: number; score: number }[];
	reversals: RankReversal[];
} {
	const scored = bidsInEventCurrency(bids, money.currency, money.rates)
		.filter(
			(b) =>
				b.source !== 'withdrawal' &&
				b.lines.length === quantities.size &&
				points.has(b.supplierOrganisationId)
		)
		.map((b) => ({
			supplier: b.supplierName,
			price: b.lines.reduce((t, l) => t + Number(l.unitPrice) * (quantities.get(l.item) ?? 0), 0),
			quality: points.get(b.supplierOrganisationId)!
		}));
	const score = new Map(relativeScores(scored, priceWeight).map((s) => [s.supplier, s.score]));
	return {
		scores: scored.map((s) => ({ ...s, score: score.get(s.supplier)! })).sort((x, y) => y.score - x.score),
		reversals: rankReversals(scored, priceWeight)
	};
}

/** The criteria tab: the draft's criteria, and after the opening each supplier's answers, scores and money. */
export async function criteriaPage(
	user: SessionUser,
	eventId: string,
	view: { priceWeight: number; quality: string | null }
) {
	const event = await evaluationEvent(user, eventId);
	const criteria = await listCriteria(db(), eventId);
	const sealed = ['draft', 'open'].includes(effectiveState(event));
	if (sealed) return { event, criteria, sealed: true as const };
	const [bids, scores, items, rates] = await Promise.all([
		visibleBids(db(), eventId, user.organisationId, now()),
		latestScores(db(), eventId),
		listItems(db(), eventId),
		listRates(db(), eventId)
	]);
	const list = evaluations(criteria, bids, scores);
	const quality =
		criteria.find((c) => c.ref === view.quality) ??
		criteria.find((c) => c.answeredBy === 'evaluator') ??
		criteria[0];
	const points = new Map(
		quality
			? list.flatMap((e) =>
					e.values[quality.ref] === undefined
						? []
						: [[e.supplierOrganisationId, e.values[quality.ref]!] as const]
				)
			: []
	);
	const quantities = new Map(items.map((i) => [i.ref, Number(i.quantity)]));
	return {
		event,
		criteria,
		sealed: false as const,
		evaluations: list,
		scores,
		quality: quality?.ref ?? null,
		relative: quality
			? relativeView(bids, quantities, points, view.priceWeight, { currency: event.currency, rates })
			: null
	};
}

/**
 * Each supplier's total price over the items it bid, and its evaluated cost (price + the criteria's
 * money: the percentage of the price, the amount per unit over the quantities bid, the amount once).
 * Null where the event has no criteria.
 */
export async function evaluatedTotals(
	eventId: string,
	bids: Pick<VisibleBid, 'supplierOrganisationId' | 'supplierName' | 'source' | 'answers'>[],
	totals: Map<string, { price: number; quantity: number }>
) {
	const [criteria, scores] = await Promise.all([listCriteria(db(), eventId), latestScores(db(), eventId)]);
	if (!criteria.length) return null;
	return evaluations(criteria, bids, scores).map((e) => {
		const total = totals.get(e.supplierOrganisationId) ?? { price: 0, quantity: 0 };
		const a = e.adjustment;
		return {
			supplierName: e.supplierName,
			price: total.price,
			evaluated: total.price * (1 + a.percentOfPrice / 100) + a.perUnit * total.quantity + a.perSupplier,
			missing: e.missing
		};
	});
}

/** A finished run's price and evaluated cost per awarded supplier; null without criteria money. */
export async function runEvaluatedTotals(user: SessionUser, runId: string, eventId: string) {
	await evaluationEvent(user, eventId);
	// Criteria are fixed before bids arrive: an event without any has no run with criteria money, and its
	// run pages never read the (possibly large) problem for it.
	if (!(await listCriteria(db(), eventId)).length || !(await runHasCriteria(db(), runId))) return null;
	const run = await findRun(db(), runId);
	if (!run || run.event_id !== eventId || run.status !== 'done' || !run.result) return null;
	const totals = evaluatedSupplierTotals(run.problem, run.result.awards ?? []);
	return totals && { currency: run.problem.currency, totals };
}

/**
 * The tabulation's suppliers at price and at evaluated cost: each priced cell's landed unit price plus the
 * supplier's percentage of the price as bid (without the item's freight and duty) and its amount per unit,
 * times the item's quantity; plus its amount once. Null where the event has no criteria. The tabulation's
 * prices and totals are in the event currency already (staffTabulation converts every bid at the fixed
 * rates), as are the item's adders and the criteria's money.
 */
export async function tabulationEvaluated(user: SessionUser, eventId: string, tab: Tabulated) {
	const event = await evaluationEvent(user, eventId);
	const criteria = await listCriteria(db(), eventId);
	if (!criteria.length) return null;
	const [bids, scores] = await Promise.all([
		currentAnswers(db(), eventId, user.organisationId, now()),
		latestScores(db(), eventId)
	]);
	const list = evaluations(
		criteria,
		bids.map((b) => ({ ...b, source: b.source as VisibleBid['source'] })),
		scores
	);
	const width = tab.suppliers.length;
	return {
		currency: event.currency,
		totals: tab.suppliers.flatMap((s, c) => {
			const e = list.find((x) => x.supplierOrganisationId === s.id);
			if (s.withdrawn || !e || !s.itemsBid) return [];
			const a = e.adjustment;
			let evaluated = a.perSupplier;
			tab.items.forEach((item, r) => {
				const price = tab.prices[r * width + c]!;
				if (Number.isNaN(price)) return;
				evaluated += item.quantity * (price + ((price - item.adder) * a.percentOfPrice) / 100 + a.perUnit);
			});
			return [{ supplierId: s.id, supplier: s.name, price: s.total, evaluated, missing: e.missing }];
		})
	};
}

/** The rows of the price and evaluated cost table, as text. */
export function evaluatedRows(
	evaluated: {
		currency: string;
		totals: { supplier: string; price: number; evaluated: number; missing?: string[] }[];
	} | null
) {
	if (!evaluated) return null;
	const money = (v: number) => formatMoney(v, evaluated.currency);
	return evaluated.totals.map((t) => ({
		supplier: t.supplier,
		price: money(t.price),
		evaluated: money(t.evaluated),
		...(t.missing?.length ? { note: `not yet answered or scored: ${t.missing.join(', ')}` } : {})
	}));
}
