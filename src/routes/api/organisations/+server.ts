import { json } from '@sveltejs/kit';
import { requireRole } from '$lib/server/auth/guard';
import { jsonError } from '$lib/server/http';
import { organisationsFor } from '$lib/server/services/organisations';
import type { RequestHandler } from './$types';

/**
 * Organisations as the caller's role needs them. Buyers: the supplier directory, to choose whom to invite,
 * and their own organisation. Admins: their own organisation and the suppliers it works with. Nobody sees
 * another buying organisation.
 */
export const GET: RequestHandler = async (event) => {
	const user = requireRole(event, 'admin', 'buyer');
	const kind = event.url.searchParams.get('kind') ?? 'supplier';
	if (kind !== 'supplier' && kind !== 'buyer' && kind !== 'all') {
		return jsonError(400, 'kind must be supplier, buyer or all', { kind });
	}
	if (kind === 'all' && user.role !== 'admin')
		return jsonError(403, 'Buyers list supplier organisations (kind=supplier) or their own (kind=buyer).', {
			kind,
			userId: user.id
		});
	const organisations = await organisationsFor(user, kind);
	return json(organisations.map((o) => ({ id: o.id, name: o.name, kind: o.kind })));
};
