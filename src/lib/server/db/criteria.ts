// Evaluation criteria of an event, suppliers' answers per bid revision, and evaluators' scores. Answers
// are read only for revisions the caller already read through visible_bid_revisions (db/bids.ts).
import type { Criterion } from '$lib/evaluation/criteria';
import type { Db } from './knex';

interface CriterionRow {
	ref: string;
	name: string;
	unit: string;
	answered_by: Criterion['answeredBy'];
	basis: Criterion['basis'];
	rate: string;
	threshold: string;
	direction: Criterion['direction'];
}

export interface ScoreRow {
	criterion_ref: string;
	supplier_organisation_id: string;
	value: string;
	comment: string;
	scored_by: number;
	scorer_name: string | null;
	scored_at: Date;
}

export async function listCriteria(db: Db, eventId: string): Promise<Criterion[]> {
	const rows: CriterionRow[] = await db('evaluation_criteria')
		.where({ event_id: eventId })
		.orderBy('position')
		.select('ref', 'name', 'unit', 'answered_by', 'basis', 'rate', 'threshold', 'direction');
	return rows.map((r) => ({
		ref: r.ref,
		name: r.name,
		unit: r.unit,
		answeredBy: r.answered_by,
		basis: r.basis,
		rate: Number(r.rate),
		threshold: Number(r.threshold),
		direction: r.direction
	}));
}

/** All of a draft's criteria at once (a trigger refuses it once the event is published). */
export async function replaceCriteria(db: Db, eventId: string, criteria: Criterion[]): Promise<void> {
	await db('evaluation_criteria').where({ event_id: eventId }).delete();
	if (!criteria.length) return;
	await db('evaluation_criteria').insert(
		criteria.map((c, position) => ({
			event_id: eventId,
			ref: c.ref,
			name: c.name,
			unit: c.unit,
			answered_by: c.answeredBy,
			basis: c.basis,
			rate: c.rate,
			threshold: c.threshold,
			direction: c.direction,
			position
		}))
	);
}

export async function insertAnswers(
	db: Db,
	revisionId: string,
	answers: Record<string, number>
): Promise<void> {
	const rows = Object.entries(answers).map(([ref, value]) => ({
		revision_id: revisionId,
		criterion_ref: ref,
		value
	}));
	if (rows.length) await db('bid_criterion_answers').insert(rows);
}

/** Answers of these revisions, by revision id. */
export async function answersOf(db: Db, revisionIds: string[]): Promise<Map<string, Record<string, number>>> {
	const byRevision = new Map<string, Record<string, number>>();
	if (!revisionIds.length) return byRevision;
	const rows: { revision_id: string; criterion_ref: string; value: string }[] = await db(
		'bid_criterion_answers'
	)
		.whereIn('revision_id', revisionIds)
		.select('revision_id', 'criterion_ref', 'value');
	for (const r of rows) {
		const answers = byRevision.get(r.revision_id) ?? {};
		answers[r.criterion_ref] = Number(r.value);
		byRevision.set(r.revision_id, answers);
	}
	return byRevision;
}

export async function insertScore(
	db: Db,
	score: {
		eventId: string;
		criterionRef: string;
		supplierOrganisationId: string;
		value: number;
		comment: string;
		scoredBy: number;
		scoredAt: Date;
	}
): Promise<void> {
	await db('criterion_scores').insert({
		event_id: score.eventId,
		criterion_ref: score.criterionRef,
		supplier_organisation_id: score.supplierOrganisationId,
		value: score.value,
		comment: score.comment,
		scored_by: score.scoredBy,
		scored_at: score.scoredAt
	});
}

/** Each criterion's latest score per supplier (earlier ones stay, and in the trail). */
export function latestScores(db: Db, eventId: string): Promise<ScoreRow[]> {
	return db('criterion_scores as s')
		.leftJoin('users as u', 'u.id', 's.scored_by')
		.where('s.event_id', eventId)
		.distinctOn('s.criterion_ref', 's.supplier_organisation_id')
		.orderBy([
			{ column: 's.criterion_ref' },
			{ column: 's.supplier_organisation_id' },
			{ column: 's.scored_at', order: 'desc' }
		])
		.select(
			's.criterion_ref',
			's.supplier_organisation_id',
			's.value',
			's.comment',
			's.scored_by',
			'u.name as scorer_name',
			's.scored_at'
		) as unknown as Promise<ScoreRow[]>;
}

/**
 * Whether a run's problem carries criteria money (prices before the criteria, or a criteria fixed cost).
 * The jsonpath filter's question mark is escaped: knex reads a bare one as a binding.
 */
export async function runHasCriteria(db: Db, runId: string): Promise<boolean> {
	const row = await db('award_runs')
		.where({ id: runId })
		.first(
			db.raw(
				`jsonb_path_exists(problem, '$.bids[*].priceBeforeCriteria') or jsonb_path_exists(problem, '$.bundles[*].priceBeforeCriteria') or jsonb_path_exists(problem, '$.rules[*] \\? (@.type == "award_fixed_cost" && exists(@.who))') as has`
			)
		);
	return Boolean((row as { has?: boolean } | undefined)?.has);
}

/**
 * Each supplier's current revision the viewer may see (visible_bid_revisions: after the deadline for the
 * buying organisation), with its answers: no prices read. The latest VISIBLE revision, as visibleBids
 * (db/bids.ts) picks it: a revision sealed in a round still open is not the current one yet.
 */
export async function currentAnswers(
	db: Db,
	eventId: string,
	viewerOrganisationId: string,
	now: Date
): Promise<
	{ supplierOrganisationId: string; supplierName: string; source: string; answers: Record<string, number> }[]
> {
	const rows: { id: string; supplier_organisation_id: string; supplier_name: string; source: string }[] =
		await db
			.select('r.id', 'r.supplier_organisation_id', 'r.source', 'o.name as supplier_name')
			.from(
				db
					.select(
						'v.id',
						'v.supplier_organisation_id',
						'v.source',
						db.raw(
							'row_number() over (partition by v.supplier_organisation_id order by v.number desc) as latest'
						)
					)
					.from(db.raw('visible_bid_revisions(?, ?, ?) as v', [eventId, viewerOrganisationId, now]))
					.as('r')
			)
			.join('organisations as o', 'o.id', 'r.supplier_organisation_id')
			.where('r.latest', 1);
	const answers = await answersOf(
		db,
		rows.map((r) => r.id)
	);
	return rows.map((r) => ({
		supplierOrganisationId: r.supplier_organisation_id,
		supplierName: r.supplier_name,
		source: r.source,
		answers: answers.get(r.id) ?? {}
	}));
}
