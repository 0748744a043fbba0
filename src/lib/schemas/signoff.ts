// What a buyer sends with a run submitted for sign-off: the page's form and `POST /api/runs/{id}/submit`.
import { z } from 'zod';
import { formatQuantity } from '$lib/format';

export const JUSTIFICATION_MIN = 10;
export const JUSTIFICATION_MAX = 4000;

const justificationMessage = `justification: say why this run should be awarded, in ${JUSTIFICATION_MIN} to ${formatQuantity(JUSTIFICATION_MAX)} characters.`;

/** The reason the award report carries; trimmed before it is measured. */
export const justificationSchema = z
	.string(justificationMessage)
	.trim()
	.min(JUSTIFICATION_MIN, justificationMessage)
	.max(JUSTIFICATION_MAX, justificationMessage);

export const submitRunSchema = z.object({ justification: justificationSchema });
export type SubmitRun = z.infer<typeof submitRunSchema>;
