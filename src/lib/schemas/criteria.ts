// Forms of the evaluation criteria: the draft's list (one row per criterion) and an evaluator's score.
import { z } from 'zod';

const number = (what: string) =>
	z
		.string()
		.trim()
		.regex(/^[+-]?(\d+\.?\d*|\.\d+)$/, `${what} must be a number, with a point as the decimal mark`)
		.transform(Number);

export const criterionRowSchema = z.object({
	ref: z.string().trim().min(1, 'the ref is missing').max(40, 'the ref must be at most 40 characters'),
	name: z.string().trim().min(1, 'the name is missing').max(200, 'the name must be at most 200 characters'),
	unit: z.string().trim().max(40, 'the unit must be at most 40 characters'),
	answeredBy: z.enum(['supplier', 'evaluator'], 'choose who answers'),
	basis: z.enum(['percent_of_price', 'per_unit', 'per_supplier'], 'choose how it turns into money'),
	rate: number('The money per point'),
	threshold: number('The threshold'),
	direction: z.enum(['above', 'below'], 'choose above or below')
});

export const scoreSchema = z.object({
	criterionRef: z.string().trim().min(1).max(40),
	supplierOrganisationId: z.uuid('choose a supplier'),
	value: number('The score'),
	comment: z.string().trim().min(1, 'give the reason for the score').max(2000)
});
