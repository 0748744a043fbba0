// The award model: the problem written as a (mixed-integer) linear program in arrays, with a record of
// what every column and row means so results and explanations can speak in the trade's words.
//
// Notation: d[i] demand of item i; x[b,t] quantity on tier t of bid b (tier 0 is the plain unit price,
// tier t >= 1 a price break, all-units); z[b,t] in {0,1} "tier t of bid b is used"; w[k] in {0,1}
// "bundle k is taken"; y[s,i] in {0,1} "s wins part of i"; v[s,G] in {0,1} "s wins part of group G".
// q(s,i) = Σ_t x[b(s,i),t] + Σ_k q[k,i]·w[k] is the quantity of i awarded to s.
//
// buildModel adds the constraint families of model-families.ts in a fixed order (columns and rows keep
// that order, which model.spec.ts pins): bid quantities and price breaks, bundles, cover, capacities,
// then each rule in the problem's order, then, for the feasibility relaxation, the slacks.
import type { AwardModel } from './model-builder';
import { ModelContext } from './model-context';
import {
	bidQuantities,
	bundles,
	capacities,
	cover,
	exclusions,
	fixedQuantities,
	feasibilitySlacks,
	fixedCosts,
	minimumAwardAmounts,
	minimumAwards,
	shares,
	spendCaps,
	supplierCounts
} from './model-families';
import type { AwardProblem } from './problem';

export type { AwardModel, ColumnMeaning, RowMeaning } from './model-builder';
export { bundleShares, referencePrices, tiersOf } from './prices';

export interface BuildOptions {
	/** Feasibility relaxation: each rule, cover and capacity row gets a slack; the objective is their sum. */
	elastic?: boolean;
	/** Leave these rules out (by index in problem.rules), for rule costs. */
	withoutRules?: ReadonlySet<number>;
}

export function buildModel(problem: AwardProblem, options: BuildOptions = {}): AwardModel {
	const skip = options.withoutRules ?? new Set<number>();
	const rules = problem.rules.map((rule, index) => ({ rule, index })).filter(({ index }) => !skip.has(index));
	const ctx = new ModelContext(problem, options.elastic ?? false);
	bidQuantities(ctx);
	bundles(ctx);
	const uncovered = ctx.closeOffers();
	cover(ctx);
	capacities(ctx);
	const minimumOf = minimumAwardAmounts(ctx, rules);
	for (const { rule, index } of rules) {
		switch (rule.type) {
			case 'max_share':
			case 'min_share':
				shares(ctx, rule, index);
				break;
			case 'min_award':
				minimumAwards(ctx, rule, index, minimumOf);
				break;
			case 'supplier_count':
				supplierCounts(ctx, rule, index);
				break;
			case 'max_spend':
				spendCaps(ctx, rule, index);
				break;
			case 'exclude':
				exclusions(ctx, rule, index);
				break;
			case 'fixed_quantity':
				fixedQuantities(ctx, rule, index);
				break;
			case 'award_fixed_cost':
				fixedCosts(ctx, rule);
				break;
		}
	}
	if (ctx.elastic) feasibilitySlacks(ctx);
	return ctx.builder.finish(uncovered, ctx.elastic);
}
