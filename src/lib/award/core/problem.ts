// The award problem: what the engine is asked to solve. Validated with zod; cross-references
// (refs that must exist, refs that must be unique, quantities that must fit) are checked after the shape.
import { z } from 'zod';
import { countedWhole } from './units';

const ref = z
	.string('must be a string')
	.trim()
	.min(1, 'must not be empty')
	.max(200, 'must be at most 200 characters');
const nonNegative = z
	.number('must be a number')
	.finite('must be a finite number')
	.min(0, 'must be a number >= 0');
const positive = z.number('must be a number').finite('must be a finite number').gt(0, 'must be a number > 0');
const percent = z
	.number('must be a number')
	.min(0, 'must be a percentage from 0 to 100')
	.max(100, 'must be a percentage from 0 to 100');

export const scopeSchema = z.union([
	z.literal('each_item'),
	z.literal('event'),
	z.object({ item: ref }).strict(),
	z.object({ lot: ref }).strict()
]);
export const whoSchema = z.union([
	z.literal('each_supplier'),
	z.object({ supplier: ref }).strict(),
	z.object({ tag: ref }).strict()
]);

const label = z.string().max(300).optional();
/** The price before the money of non-price criteria (evaluation/criteria.ts): for pages; the engine ignores it. */
const priceBeforeCriteria = nonNegative.optional();

const shareRule = {
	label,
	scope: scopeSchema,
	who: whoSchema,
	percent,
	basis: z.enum(['quantity', 'spend']).optional()
};

export const ruleSchema = z.discriminatedUnion('type', [
	z.object({ type: z.literal('max_share'), ...shareRule }).strict(),
	z.object({ type: z.literal('min_share'), ...shareRule }).strict(),
	z
		.object({
			type: z.literal('min_award'),
			label,
			scope: scopeSchema,
			who: whoSchema,
			quantity: positive.optional(),
			percentOfItem: percent.optional()
		})
		.strict()
		.refine((r) => (r.quantity === undefined) !== (r.percentOfItem === undefined), {
			message: 'needs exactly one of quantity or percentOfItem'
		}),
	z
		.object({
			type: z.literal('supplier_count'),
			label,
			scope: scopeSchema,
			min: z.number().int('must be a whole number').min(0, 'must be >= 0').optional(),
			max: z.number().int('must be a whole number').min(1, 'must be >= 1').optional()
		})
		.strict()
		.refine((r) => r.min !== undefined || r.max !== undefined, { message: 'needs min, max or both' })
		.refine((r) => r.min === undefined || r.max === undefined || r.min <= r.max, {
			message: 'min must not exceed max'
		}),
	z
		.object({ type: z.literal('max_spend'), label, scope: scopeSchema, who: whoSchema, amount: nonNegative })
		.strict(),
	z.object({ type: z.literal('exclude'), label, scope: scopeSchema, who: whoSchema }).strict(),
	// A quantity fixed by hand on one item for one supplier (the changes of an adjusted run).
	z
		.object({
			type: z.literal('fixed_quantity'),
			label,
			scope: z.object({ item: ref }).strict(),
			who: z.object({ supplier: ref }).strict(),
			quantity: nonNegative
		})
		.strict(),
	z
		.object({
			type: z.literal('award_fixed_cost'),
			label,
			amount: nonNegative,
			per: z.enum(['supplier', 'supplier_item']),
			// One supplier's own cost (its money-valued criteria); absent: every supplier's.
			who: z.object({ supplier: ref }).strict().optional()
		})
		.strict()
]);

export const problemSchema = z
	.object({
		currency: z.string().regex(/^[A-Z]{3}$/, 'must be an ISO 4217 code such as EUR'),
		items: z
			.array(
				z
					.object({
						ref,
						quantity: positive,
						lot: ref.optional(),
						baselineUnitPrice: nonNegative.optional(),
						unit: z.string().max(3).optional(),
						wholeUnits: z.boolean('must be true or false').optional(),
						orderMultiple: positive.optional(),
						description: z.string().max(2000).optional()
					})
					.strict()
			)
			.min(1, 'must list at least one item'),
		suppliers: z
			.array(
				z
					.object({
						ref,
						name: z.string().max(300).optional(),
						capacity: nonNegative.optional(),
						tags: z.array(ref).optional(),
						// The supplier's own currency and its fixed rate (event-currency units per unit): a record
						// of how its prices were converted, bound by the problem's hash; the engine ignores it.
						bidCurrency: z
							.object({ code: z.string().regex(/^[A-Z]{3}$/), rate: z.number().positive() })
							.strict()
							.optional()
					})
					.strict()
			)
			.min(1, 'must list at least one supplier'),
		bids: z.array(
			z
				.object({
					supplier: ref,
					item: ref,
					unitPrice: nonNegative,
					maxQuantity: positive.optional(),
					packSize: positive.optional(),
					priceBreaks: z
						.array(z.object({ fromQuantity: positive, unitPrice: nonNegative, priceBeforeCriteria }).strict())
						.optional(),
					priceBeforeCriteria
				})
				.strict()
		),
		bundles: z
			.array(
				z
					.object({
						ref,
						supplier: ref,
						price: nonNegative,
						priceBeforeCriteria,
						items: z
							.array(z.object({ item: ref, quantity: positive }).strict())
							.min(1, 'must list at least one item')
					})
					.strict()
			)
			.default([]),
		rules: z.array(ruleSchema).default([])
	})
	.strict();

export type AwardProblem = z.output<typeof problemSchema>;
export type AwardRule = AwardProblem['rules'][number];
export type Scope = z.output<typeof scopeSchema>;
export type Who = z.output<typeof whoSchema>;

export type Parsed = { ok: true; problem: AwardProblem } | { ok: false; problems: string[] };

function pathText(path: readonly PropertyKey[]): string {
	return path
		.map((p, i) => (typeof p === 'number' ? `[${p}]` : `${i === 0 ? '' : '.'}${String(p)}`))
		.join('');
}

/** Checks the shape, then every cross-reference; returns all problems at once, each naming its path. */
export function parseProblem(input: unknown): Parsed {
	const shaped = problemSchema.safeParse(input);
	if (!shaped.success) {
		return {
			ok: false,
			problems: shaped.error.issues.map((issue) => `${pathText(issue.path) || '(problem)'}: ${issue.message}`)
		};
	}
	const problem = shaped.data;
	const problems: string[] = [];
	const items = new Map<string, number>();
	const suppliers = new Set<string>();
	const lots = new Set<string>();
	const tags = new Set<string>();
	const whole = new Set<string>();
	const countedIn = (item: AwardProblem['items'][number]) =>
		`${item.ref} is counted in whole units${item.wholeUnits ? '' : ` (${item.unit})`}; wholeUnits: false allows parts`;
	problem.items.forEach((item, i) => {
		if (items.has(item.ref)) problems.push(`items[${i}].ref: duplicate ref "${item.ref}"`);
		items.set(item.ref, item.quantity);
		if (item.lot) lots.add(item.lot);
		if (!countedWhole(item)) return;
		whole.add(item.ref);
		if (!Number.isInteger(item.quantity))
			problems.push(`items[${i}].quantity: ${item.quantity} is not a whole number, and ${countedIn(item)}`);
		if (item.orderMultiple !== undefined && !Number.isInteger(item.orderMultiple))
			problems.push(
				`items[${i}].orderMultiple: ${item.orderMultiple} is not a whole number, and ${countedIn(item)}`
			);
	});
	const itemByRef = new Map(problem.items.map((item) => [item.ref, item]));
	problem.suppliers.forEach((supplier, i) => {
		if (suppliers.has(supplier.ref)) problems.push(`suppliers[${i}].ref: duplicate ref "${supplier.ref}"`);
		suppliers.add(supplier.ref);
		supplier.tags?.forEach((t) => tags.add(t));
	});
	const pairs = new Set<string>();
	problem.bids.forEach((bid, b) => {
		if (!suppliers.has(bid.supplier))
			problems.push(`bids[${b}].supplier: unknown supplier "${bid.supplier}"`);
		if (!items.has(bid.item)) problems.push(`bids[${b}].item: unknown item "${bid.item}"`);
		const pair = JSON.stringify([bid.supplier, bid.item]);
		if (pairs.has(pair))
			problems.push(
				`bids[${b}]: a second bid by "${bid.supplier}" for "${bid.item}" (one bid per supplier and item)`
			);
		pairs.add(pair);
		if (bid.packSize !== undefined && whole.has(bid.item) && !Number.isInteger(bid.packSize))
			problems.push(
				`bids[${b}].packSize: ${bid.packSize} is not a whole number, and ${countedIn(itemByRef.get(bid.item)!)}`
			);
		let previous = { fromQuantity: 0, unitPrice: bid.unitPrice };
		bid.priceBreaks?.forEach((priceBreak, k) => {
			if (priceBreak.fromQuantity <= previous.fromQuantity) {
				problems.push(
					`bids[${b}].priceBreaks[${k}].fromQuantity: must be greater than the previous break's (${previous.fromQuantity})`
				);
			}
			if (priceBreak.unitPrice > previous.unitPrice) {
				problems.push(
					`bids[${b}].priceBreaks[${k}].unitPrice: must not be above the previous price (${previous.unitPrice})`
				);
			}
			previous = priceBreak;
		});
	});
	const bundleRefs = new Set<string>();
	problem.bundles.forEach((bundle, k) => {
		if (bundleRefs.has(bundle.ref)) problems.push(`bundles[${k}].ref: duplicate ref "${bundle.ref}"`);
		bundleRefs.add(bundle.ref);
		if (!suppliers.has(bundle.supplier))
			problems.push(`bundles[${k}].supplier: unknown supplier "${bundle.supplier}"`);
		const seen = new Set<string>();
		bundle.items.forEach((line, j) => {
			const demand = items.get(line.item);
			if (demand === undefined) problems.push(`bundles[${k}].items[${j}].item: unknown item "${line.item}"`);
			else if (line.quantity > demand) {
				problems.push(
					`bundles[${k}].items[${j}].quantity: ${line.quantity} exceeds the item's quantity ${demand}`
				);
			}
			if (demand !== undefined && whole.has(line.item) && !Number.isInteger(line.quantity))
				problems.push(
					`bundles[${k}].items[${j}].quantity: ${line.quantity} is not a whole number, and ${countedIn(itemByRef.get(line.item)!)}`
				);
			if (seen.has(line.item))
				problems.push(`bundles[${k}].items[${j}].item: "${line.item}" appears twice in the bundle`);
			seen.add(line.item);
		});
	});
	problem.rules.forEach((rule, r) => {
		if ('scope' in rule && typeof rule.scope === 'object') {
			if ('item' in rule.scope && !items.has(rule.scope.item))
				problems.push(`rules[${r}].scope.item: unknown item "${rule.scope.item}"`);
			if ('lot' in rule.scope && !lots.has(rule.scope.lot))
				problems.push(`rules[${r}].scope.lot: unknown lot "${rule.scope.lot}"`);
		}
		if ('who' in rule && typeof rule.who === 'object') {
			if ('supplier' in rule.who && !suppliers.has(rule.who.supplier)) {
				problems.push(`rules[${r}].who.supplier: unknown supplier "${rule.who.supplier}"`);
			}
			if ('tag' in rule.who && !tags.has(rule.who.tag))
				problems.push(`rules[${r}].who.tag: no supplier has the tag "${rule.who.tag}"`);
		}
	});
	if (problem.bids.length === 0 && problem.bundles.length === 0)
		problems.push('bids: there are no bids to award');
	return problems.length ? { ok: false, problems } : { ok: true, problem };
}

/** The same problem over some items only: their bids, the bundles wholly inside them, the rules that apply. */
export function restrictToItems(problem: AwardProblem, items: string[]): AwardProblem {
	const keep = new Set(items);
	return {
		...problem,
		items: problem.items.filter((i) => keep.has(i.ref)),
		bids: problem.bids.filter((b) => keep.has(b.item)),
		bundles: problem.bundles.filter((b) => b.items.every((l) => keep.has(l.item))),
		rules: problem.rules.filter(
			(r) => !('scope' in r) || typeof r.scope !== 'object' || !('item' in r.scope) || keep.has(r.scope.item)
		)
	};
}

/** The input contract as JSON Schema (draft 2020-12), for docs/ and for API clients. */
export function problemJsonSchema(): unknown {
	return z.toJSONSchema(problemSchema, { io: 'input', unrepresentable: 'any' });
}
