// Runs compared: which runs of an event may be compared, and their comparison (run-comparison.ts) for the
// compare page, its API and its workbook. Staff of the buying organisation only; a run of another event
// is the same 404 as a run that does not exist.
import type { SessionUser } from '../auth/session-user';
import * as awards from '../db/awards';
import { db } from '../db/knex';
import { runItems, type RunItem } from '../db/run-items';
import type { RunView } from '../db/tables';
import { compareRuns, type RunComparison } from '../run-comparison';
import { staffEvent } from './award-plans';
import { findRunView } from './award-runs';
import { RuleViolation } from './errors';

export const MIN_COMPARED = 2;
export const MAX_COMPARED = 4;

export interface ComparisonQuery {
	runs: string[];
	reference?: string;
	page: number;
}

/** `run` (repeated), `ref` (the reference run) and `page` (of the items allocated differently). */
export function comparisonQuery(params: URLSearchParams): ComparisonQuery {
	const runs = [...new Set(params.getAll('run').map((id) => id.trim().slice(0, 64)))].filter(Boolean);
	const page = Number.parseInt(params.get('page') ?? '1', 10);
	return {
		// More than a handful is refused with a message; the ids past it are not needed to say so.
		runs: runs.slice(0, 20),
		reference: params.get('ref')?.slice(0, 64) || undefined,
		page: Number.isInteger(page) && page > 0 ? page : 1
	};
}

/** A run with an allocation to compare: finished, with a total. */
const comparable = (run: RunView) => run.status === 'done' && run.result?.totalCost != null;

function whyNotComparable(run: RunView): string {
	if (run.status === 'queued' || run.status === 'running') return 'it has not finished yet';
	if (run.status === 'failed') return 'it failed';
	if (run.status === 'cancelled') return 'it was cancelled';
	return `it found no allocation (${run.result?.status ?? 'no result'})`;
}

export interface ComparisonChoice {
	id: string;
	number: number;
	plan: string;
	totalCost: number;
	chosen: boolean;
}

export type EventComparison = {
	event: { id: string; reference: string; title: string; currency: string };
	/** The event's finished runs, oldest first, marked where chosen: the chooser's checkboxes. */
	choices: ComparisonChoice[];
	chosen: string[];
} & ({ compared: false; message: string } | { compared: true; comparison: RunComparison });

export async function compareEventRuns(
	user: SessionUser,
	eventId: string,
	query: ComparisonQuery,
	options: { pageSize?: number } = {}
): Promise<EventComparison> {
	const event = await staffEvent(user, eventId);
	const all = await awards.listRuns(db(), event.id);
	const choices = all
		.filter(comparable)
		.sort((a, b) => a.number - b.number)
		.map((run) => ({
			id: run.id,
			number: run.number,
			plan: run.plan_name,
			totalCost: run.result!.totalCost!,
			chosen: query.runs.includes(run.id)
		}));
	const base = {
		event: { id: event.id, reference: event.reference, title: event.title, currency: event.currency },
		choices,
		chosen: query.runs
	};
	// Any id that is not a run of this event is the 404 a run of another event gets, however many were chosen.
	const known = new Set(all.map((run) => run.id));
	if (query.runs.some((id) => !known.has(id)))
		throw new RuleViolation('There is no such run.', undefined, 404);
	const count = query.runs.length;
	if (count < MIN_COMPARED || count > MAX_COMPARED)
		return {
			...base,
			compared: false,
			message:
				count === 0
					? 'Choose two to four runs to compare.'
					: count === 1
						? 'One run was chosen: choose two to four runs to compare.'
						: 'More than four runs were chosen: choose two to four runs to compare.'
		};

	const runs: RunView[] = [];
	for (const id of query.runs) runs.push((await findRunView(user, id, event.id)).run);
	const waiting = runs.find((run) => !comparable(run));
	if (waiting)
		return {
			...base,
			compared: false,
			message: `Run ${waiting.number} cannot be compared: ${whyNotComparable(waiting)}. Choose finished runs.`
		};

	runs.sort((a, b) => a.number - b.number);
	const itemsByRun = await runItems(
		db(),
		runs.map((r) => r.id)
	);
	const items: RunItem[] = runs.flatMap((r) => itemsByRun.get(r.id) ?? []);
	const numbers = new Map(all.map((run) => [run.id, run.number]));
	const comparison = compareRuns(
		runs.map((run) => ({
			id: run.id,
			number: run.number,
			plan: run.plan_name,
			status: run.status,
			result: run.result!,
			adjustedFrom: run.adjusted_from
				? { id: run.adjusted_from, number: numbers.get(run.adjusted_from) ?? null }
				: null,
			manualChanges: run.adjustments?.length ?? 0
		})),
		items,
		{ reference: query.reference, page: query.page, pageSize: options.pageSize }
	);
	return { ...base, compared: true, comparison };
}
