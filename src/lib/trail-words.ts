// A trail entry's detail as a line people read: "run 3 · plan Dual sourcing · state In evaluation →
// Awaiting sign-off". The stored detail stays exact (JSON, hashed) and is one click away on the page; this
// is only how a page shows it. Internal ids (UUIDs) and the solver's settings and version are left to the
// stored detail; a run's "run <id>, number 3" reads "run 3"; amounts are in the event's currency; states
// and outcomes use the words of the badges and the run pages.
import { stateNames } from './event-states';
import { formatMoney, outcomeLabel } from './format';

const HEX_HASH = /^[0-9a-f]{64}$/;
const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;
/** Kept in the stored detail only: how the solver was set up, not what was decided. */
const SOLVER_ONLY = new Set(['options', 'solverVersion', 'solver', 'explain']);
/** Keys whose numbers are amounts of money. */
const MONEY = /(cost|total|amount|spend)$/i;

interface Context {
	currency?: string;
}

/** "problemSha256" → "problem SHA-256", "boundHash" → "bound hash". */
function words(key: string): string {
	return key
		.replace(/Sha256$/, ' SHA-256')
		.replace(/([a-z])([A-Z])/g, '$1 $2')
		.replace(/_/g, ' ')
		.toLowerCase()
		.replace('sha-256', 'SHA-256');
}

function value(v: unknown, key: string, context: Context): string | null {
	if (v === null || v === undefined) return '—';
	if (typeof v === 'string') {
		if (UUID.test(v)) return null;
		if (HEX_HASH.test(v)) return `${v.slice(0, 12)}…`;
		if (key === 'state' || key === 'from' || key === 'to') return stateNames[v] ?? v.replace(/_/g, ' ');
		if (key === 'status' || key === 'outcome') return outcomeLabel(v).replace(/_/g, ' ');
		return v.replace(/_/g, ' ');
	}
	if (typeof v === 'number')
		return MONEY.test(key) && context.currency ? formatMoney(v, context.currency) : String(v);
	if (typeof v === 'boolean') return v ? 'yes' : 'no';
	if (Array.isArray(v))
		return v.length <= 3 && v.every((x) => typeof x !== 'object')
			? v.map((x) => value(x, key, context)).join(', ')
			: `${v.length} entries`;
	const o = v as Record<string, unknown>;
	if ('from' in o && 'to' in o && Object.keys(o).length === 2) {
		const inner = key === 'state' ? 'state' : key;
		return `${value(o.from, inner, context)} → ${value(o.to, inner, context)}`;
	}
	return fields(o, context).join(', ');
}

function fields(detail: Record<string, unknown>, context: Context): string[] {
	const entries = Object.entries(detail).filter(([k]) => !SOLVER_ONLY.has(k));
	// A run is named by its number: "run <id>, number 3" reads "run 3".
	const runNumber =
		typeof detail.number === 'number' && typeof detail.run === 'string' ? detail.number : null;
	return entries.flatMap(([k, v]) => {
		if (runNumber !== null && k === 'number') return [];
		if (runNumber !== null && k === 'run') return [`run ${runNumber}`];
		const shown = value(v, k, context);
		return shown === null ? [] : [`${words(k)} ${shown}`];
	});
}

/** The detail of a trail entry as one readable line; an empty detail as an empty string. */
export function trailDetailText(detail: unknown, context: Context = {}): string {
	if (detail === null || detail === undefined) return '';
	if (typeof detail !== 'object' || Array.isArray(detail)) return value(detail, '', context) ?? '';
	return fields(detail as Record<string, unknown>, context).join(' · ');
}
