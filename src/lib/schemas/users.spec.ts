import { describe, expect, it } from 'vitest';
import { inviteUserSchema } from './users';

const base = { email: 'a@example.test', name: 'A Person', supplierOrganisationId: '', newSupplierName: '' };

describe('the invitation form', () => {
	it('accepts a staff member without a supplier organisation', () => {
		expect(inviteUserSchema.safeParse({ ...base, role: 'buyer' }).success).toBe(true);
	});

	it('asks a supplier user for exactly one of an existing or a new supplier', () => {
		const neither = inviteUserSchema.safeParse({ ...base, role: 'supplier' });
		expect(neither.success).toBe(false);
		expect(neither.error?.issues[0]?.path).toEqual(['supplierOrganisationId']);
		const both = inviteUserSchema.safeParse({
			...base,
			role: 'supplier',
			supplierOrganisationId: '5d952b7f-4efa-4136-9b09-5eeeb8ca6629',
			newSupplierName: 'New firm'
		});
		expect(both.success).toBe(false);
		expect(
			inviteUserSchema.safeParse({ ...base, role: 'supplier', newSupplierName: 'New firm' }).success
		).toBe(true);
	});

	it('refuses a role that does not exist and a malformed address', () => {
		expect(inviteUserSchema.safeParse({ ...base, role: 'owner' }).success).toBe(false);
		expect(inviteUserSchema.safeParse({ ...base, role: 'buyer', email: 'not-an-address' }).success).toBe(
			false
		);
	});
});
