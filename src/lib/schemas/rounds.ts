import { z } from 'zod';

/** A new round of bids: the service checks the deadline against the clock and the suppliers' bids. */
export const roundSchema = z.object({
	suppliers: z.array(z.string().max(64), 'Choose the suppliers to invite.').max(1000),
	deadlineLocal: z.string().max(32, 'Give a date and time for the round’s deadline.').optional(),
	deadline: z.string().max(40, 'Give the round’s deadline as an ISO 8601 time.').optional(),
	feedback: z.string().max(16),
	per: z.string().max(16).default('item')
});
