import { json } from '@sveltejs/kit';
import { requireRole } from '$lib/server/auth/guard';
import { db } from '$lib/server/db/knex';
import { listOrganisations } from '$lib/server/db/organisations';
import { jsonError } from '$lib/server/http';
import type { RequestHandler } from './$types';

/** Supplier organisations (or all with ?kind=all), for buyers choosing whom to invite. */
export const GET: RequestHandler = async (event) => {
	requireRole(event, 'admin', 'buyer');
	const kind = event.url.searchParams.get('kind') ?? 'supplier';
	if (kind !== 'supplier' && kind !== 'buyer' && kind !== 'all') {
		return jsonError(400, 'kind must be supplier, buyer or all', { kind });
	}
	const rows = await listOrganisations(db(), kind === 'all' ? undefined : kind);
	return json(rows.map((o) => ({ id: o.id, name: o.name, kind: o.kind })));
};
