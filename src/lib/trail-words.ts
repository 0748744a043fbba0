// A trail entry's detail as a line people read: "run 3 · plan Dual sourcing · state in evaluation →
// awaiting sign-off". The stored detail stays exact (JSON, hashed); this is only how a page shows it.

const HEX_HASH = /^[0-9a-f]{64}$/;

/** "problemSha256" → "problem SHA-256", "boundHash" → "bound hash". */
function words(key: string): string {
	return key
		.replace(/Sha256$/, ' SHA-256')
		.replace(/([a-z])([A-Z])/g, '$1 $2')
		.replace(/_/g, ' ')
		.toLowerCase()
		.replace('sha-256', 'SHA-256');
}

function value(v: unknown): string {
	if (v === null || v === undefined) return '—';
	if (typeof v === 'string') return HEX_HASH.test(v) ? `${v.slice(0, 12)}…` : v.replace(/_/g, ' ');
	if (typeof v === 'number' || typeof v === 'boolean') return String(v);
	if (Array.isArray(v))
		return v.length <= 3 && v.every((x) => typeof x !== 'object')
			? v.map(value).join(', ')
			: `${v.length} entries`;
	const o = v as Record<string, unknown>;
	if ('from' in o && 'to' in o && Object.keys(o).length === 2) return `${value(o.from)} → ${value(o.to)}`;
	return Object.entries(o)
		.map(([k, x]) => `${words(k)} ${value(x)}`)
		.join(', ');
}

/** The detail of a trail entry as one readable line; an empty detail as an empty string. */
export function trailDetailText(detail: unknown): string {
	if (detail === null || detail === undefined) return '';
	if (typeof detail !== 'object' || Array.isArray(detail)) return value(detail);
	return Object.entries(detail as Record<string, unknown>)
		.map(([k, v]) => `${words(k)} ${value(v)}`)
		.join(' · ');
}
