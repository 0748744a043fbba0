import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { parseProblem, problemJsonSchema } from './problem';

const valid = () => ({
	currency: 'EUR',
	items: [
		{ ref: 'IT-1', quantity: 100, lot: 'L1' },
		{ ref: 'IT-2', quantity: 50 }
	],
	suppliers: [{ ref: 'S1', tags: ['incumbent'] }, { ref: 'S2' }],
	bids: [
		{ supplier: 'S1', item: 'IT-1', unitPrice: 2 },
		{ supplier: 'S2', item: 'IT-2', unitPrice: 3 }
	],
	rules: [] as unknown[]
});

const problemsOf = (input: unknown) => {
	const parsed = parseProblem(input);
	return parsed.ok ? [] : parsed.problems;
};

describe('award problem validation', () => {
	it('accepts the minimum contract', () => {
		expect(parseProblem(valid()).ok).toBe(true);
	});

	it('names unknown refs by their path', () => {
		const input = valid();
		input.bids.push({ supplier: 'S9', item: 'IT-9', unitPrice: 1 });
		input.rules.push({ type: 'exclude', scope: { lot: 'L7' }, who: { tag: 'small' } });
		expect(problemsOf(input)).toEqual([
			'bids[2].supplier: unknown supplier "S9"',
			'bids[2].item: unknown item "IT-9"',
			'rules[0].scope.lot: unknown lot "L7"',
			'rules[0].who.tag: no supplier has the tag "small"'
		]);
	});

	it('names duplicate refs', () => {
		const input = valid();
		input.items.push({ ref: 'IT-1', quantity: 3 });
		input.suppliers.push({ ref: 'S2' });
		expect(problemsOf(input)).toEqual([
			'items[2].ref: duplicate ref "IT-1"',
			'suppliers[2].ref: duplicate ref "S2"'
		]);
	});

	it('refuses negative and non-numeric values and percentages over 100, all at once', () => {
		const input = valid() as Record<string, unknown> & ReturnType<typeof valid>;
		(input.items[0] as Record<string, unknown>).quantity = -4;
		(input.bids[0] as Record<string, unknown>).unitPrice = 'cheap';
		(input.bids[1] as Record<string, unknown>).unitPrice = -1;
		input.rules.push({ type: 'max_share', scope: 'each_item', who: 'each_supplier', percent: 150 });
		expect(problemsOf(input)).toEqual([
			'items[0].quantity: must be a number > 0',
			'bids[0].unitPrice: must be a number',
			'bids[1].unitPrice: must be a number >= 0',
			'rules[0].percent: must be a percentage from 0 to 100'
		]);
	});

	it('refuses a problem with no bids', () => {
		expect(problemsOf({ ...valid(), bids: [] })).toEqual(['bids: there are no bids to award']);
	});

	it('asks price breaks to rise in quantity and fall in price', () => {
		const input = valid();
		input.bids[0] = {
			supplier: 'S1',
			item: 'IT-1',
			unitPrice: 2,
			priceBreaks: [
				{ fromQuantity: 50, unitPrice: 1.8 },
				{ fromQuantity: 40, unitPrice: 1.9 }
			]
		} as never;
		expect(problemsOf(input)).toEqual([
			"bids[0].priceBreaks[1].fromQuantity: must be greater than the previous break's (50)",
			'bids[0].priceBreaks[1].unitPrice: must not be above the previous price (1.8)'
		]);
	});

	it('refuses a bundle quantity above the item quantity and a second bid for the same pair', () => {
		const input = {
			...valid(),
			bundles: [{ ref: 'B1', supplier: 'S1', price: 10, items: [{ item: 'IT-2', quantity: 60 }] }]
		};
		input.bids.push({ supplier: 'S1', item: 'IT-1', unitPrice: 1 });
		expect(problemsOf(input)).toEqual([
			'bids[2]: a second bid by "S1" for "IT-1" (one bid per supplier and item)',
			"bundles[0].items[0].quantity: 60 exceeds the item's quantity 50"
		]);
	});

	it('exports the input contract as JSON Schema', () => {
		const schema = problemJsonSchema() as { type: string; required: string[] };
		expect(schema.type).toBe('object');
		expect(schema.required).toEqual(expect.arrayContaining(['currency', 'items', 'suppliers', 'bids']));
		expect(schema.required).not.toContain('rules');
	});
});

describe('the published JSON Schema', () => {
	it('matches the schema in docs/ (run npm run award:schema after changing the contract)', () => {
		const published = JSON.parse(readFileSync('docs/award-problem.schema.json', 'utf8'));
		expect(published).toEqual(problemJsonSchema());
	});
});
