import { z } from 'zod';
import { ROLES } from '$lib/roles';

export const inviteUserSchema = z
	.object({
		email: z.email('Enter an e-mail address such as name@example.org.').max(254),
		name: z.string().trim().min(1, 'Enter the person’s name.').max(120, 'Use at most 120 characters.'),
		role: z.enum(ROLES, 'Choose a role.').default('buyer'),
		/** For a supplier user: an existing supplier organisation, or the name of a new one. */
		supplierOrganisationId: z.string().default(''),
		newSupplierName: z.string().trim().max(160, 'Use at most 160 characters.').default('')
	})
	.superRefine((value, ctx) => {
		if (value.role !== 'supplier') return;
		const existing = value.supplierOrganisationId !== '';
		const fresh = value.newSupplierName !== '';
		if (existing === fresh) {
			ctx.addIssue({
				code: 'custom',
				path: ['supplierOrganisationId'],
				message:
					'For a supplier user, choose an existing supplier organisation or enter the name of a new one (not both).'
			});
		}
		if (existing && !z.uuid().safeParse(value.supplierOrganisationId).success) {
			ctx.addIssue({
				code: 'custom',
				path: ['supplierOrganisationId'],
				message: 'Choose a supplier organisation from the list.'
			});
		}
	});

export const userIdSchema = z.object({ userId: z.coerce.number().int().positive() });

export const setRoleSchema = userIdSchema.extend({ role: z.enum(ROLES, 'Choose a role.') });

export const setActiveSchema = userIdSchema.extend({
	active: z.enum(['true', 'false']).transform((v) => v === 'true')
});
