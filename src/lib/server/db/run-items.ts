// The items of runs' problem snapshots, cut to what a comparison of runs needs (ref, lot, unit): the
// whole snapshot carries every bid too, about 100 kB of JSON for the 300-item demo.
import type { Db } from './knex';

export interface RunItem {
	ref: string;
	lot: string | null;
	unit: string | null;
}

/** Each run's items in its problem's order, by run id. */
export async function runItems(db: Db, runIds: string[]): Promise<Map<string, RunItem[]>> {
	if (!runIds.length) return new Map();
	const rows = (await db('award_runs')
		.whereIn('id', runIds)
		.select(
			'id',
			db.raw(
				`coalesce((select jsonb_agg(jsonb_build_object('ref', i->>'ref', 'lot', i->>'lot', 'unit', i->>'unit')
					order by n) from jsonb_array_elements(problem->'items') with ordinality as e(i, n)), '[]'::jsonb) as items`
			)
		)) as { id: string; items: RunItem[] }[];
	return new Map(rows.map((r) => [r.id, r.items]));
}
