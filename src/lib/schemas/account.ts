import { z } from 'zod';

export const setPasswordSchema = z
	.object({
		currentPassword: z.string().max(200).default(''),
		newPassword: z.string().min(12, 'Use at least 12 characters.').max(72, 'Use at most 72 characters.'),
		confirmPassword: z.string()
	})
	.refine((v) => v.newPassword === v.confirmPassword, {
		path: ['confirmPassword'],
		message: 'The two new passwords are not the same.'
	});
