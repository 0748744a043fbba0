// Organisations as each role may see them, the buying organisation's standstill setting, and the health
// check's look at the database.
import type { SessionUser } from '../auth/session-user';
import { db } from '../db/knex';
import {
	databaseAnswers,
	findOrganisation,
	listOrganisations,
	listRelatedSuppliers,
	setStandstillDays,
	standstillDays
} from '../db/organisations';
import type { OrganisationRow } from '../db/tables';
import { RuleViolation } from './errors';

/**
 * Buyers: the supplier directory (to choose whom to invite) and their own organisation. Admins: their
 * own organisation and the suppliers it works with. Nobody sees another buying organisation.
 */
export async function organisationsFor(
	user: SessionUser,
	kind: 'supplier' | 'buyer' | 'all'
): Promise<OrganisationRow[]> {
	if (user.role !== 'admin' && user.role !== 'buyer')
		throw new RuleViolation('Organisations are listed for admins and buyers.', undefined, 403);
	if (kind === 'all' && user.role !== 'admin')
		throw new RuleViolation(
			'Buyers list supplier organisations (kind=supplier) or their own (kind=buyer).',
			'kind',
			403
		);
	const own = kind === 'supplier' ? [] : [(await findOrganisation(db(), user.organisationId))!];
	const suppliers =
		kind === 'buyer'
			? []
			: user.role === 'admin'
				? await listRelatedSuppliers(db(), user.organisationId)
				: await listOrganisations(db(), 'supplier');
	return [...own, ...suppliers];
}

/** Every supplier organisation: whom a buyer may invite to an event. */
export async function supplierDirectory(user: SessionUser): Promise<OrganisationRow[]> {
	if (user.role !== 'buyer') throw new RuleViolation('Only buyers invite suppliers.', undefined, 403);
	return listOrganisations(db(), 'supplier');
}

/** The standstill of the admin's organisation, in calendar days after an award notice is dispatched. */
export async function standstillOf(admin: SessionUser): Promise<number> {
	if (admin.role !== 'admin') throw new RuleViolation('Only admins see this setting.', undefined, 403);
	return standstillDays(db(), admin.organisationId);
}

export async function setStandstill(admin: SessionUser, days: number): Promise<void> {
	if (admin.role !== 'admin') throw new RuleViolation('Only admins change this setting.', undefined, 403);
	if (!Number.isInteger(days) || days < 0 || days > 365)
		throw new RuleViolation('A whole number of calendar days from 0 to 365.', 'standstillDays', 422);
	await setStandstillDays(db(), admin.organisationId, days);
}

/** For the process supervisor and load balancers: whether the database answers. */
export function databaseHealthy(): Promise<boolean> {
	return databaseAnswers(db());
}
