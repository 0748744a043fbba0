import { api } from '$lib/server/api';
import { submissions } from '$lib/server/services/bids';

export const GET = api(async (user, event) => ({
	submissions: (await submissions(user, event.params.id!)).map((s) => ({
		supplierOrganisationId: s.supplier_organisation_id,
		supplierName: s.supplier_name,
		revisions: s.revisions,
		latestRevision: s.latest_number,
		withdrawn: s.latest_source === 'withdrawal',
		submittedAt: s.latest_at.toISOString()
	}))
}));
