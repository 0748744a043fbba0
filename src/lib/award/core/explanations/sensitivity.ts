// How the answer would move: the price of one more unit of each item, the value of one more unit of
// each capacity, and below which price each losing bid would start to win. Read from the duals of the
// LP; for an allocation with integer choices (or one solved in parts), from the LP with every integer
// fixed at its value in the allocation, so the values hold only near it.
import { buildModel, type AwardModel } from '../model';
import type { AwardProblem } from '../problem';
import type { AwardLine } from '../result';
import type { Solver } from '../solver';
import type { AwardOptions, AwardResult, Sensitivity } from '../types';
import { formatUnitPrice } from '../money';

/** The full model with each integer column fixed at the value the allocation's lines imply. */
function fixedAtAllocation(problem: AwardProblem, lines: AwardLine[]): AwardModel {
	const fixed = buildModel(problem);
	const won = new Set(lines.map((l) => `${l.supplier}|${l.item}`));
	fixed.columns.forEach((meaning, j) => {
		// Quantities in whole steps stay free (as in the LP): only the choices are fixed.
		if (!fixed.integrality[j] || meaning.kind === 'tier') return;
		let on = 0;
		if (meaning.kind === 'wins') on = won.has(`${meaning.supplier}|${meaning.item}`) ? 1 : 0;
		if (meaning.kind === 'bundle')
			on = lines.some((l) => l.bundle === problem.bundles[meaning.bundle]!.ref) ? 1 : 0;
		if (meaning.kind === 'tier_used') {
			const bid = problem.bids[meaning.bid]!;
			const line = lines.find((l) => !l.bundle && l.supplier === bid.supplier && l.item === bid.item);
			const tiers = [0, ...(bid.priceBreaks ?? []).map((b) => b.fromQuantity)];
			on = line && tiers.filter((f) => line.quantity >= f - 1e-9).length - 1 === meaning.tier ? 1 : 0;
		}
		if (meaning.kind === 'wins_group') on = lines.some((l) => l.supplier === meaning.supplier) ? 1 : 0;
		fixed.colLower[j] = on;
		fixed.colUpper[j] = on;
	});
	fixed.integers = 0;
	return fixed;
}

export async function sensitivity(
	problem: AwardProblem,
	result: Pick<AwardResult, 'method' | 'awards'>,
	solver: Solver,
	options: AwardOptions
): Promise<Sensitivity> {
	const local = result.method !== 'lp';
	const model = local ? fixedAtAllocation(problem, result.awards) : buildModel(problem);
	const outcome = await solver.solve(model, local ? { ...options, relax: true } : options);
	const found: Sensitivity = { local, coverPrices: [], capacityPrices: [], losingBids: [] };
	if (!outcome.rowDuals || !outcome.reducedCosts || !outcome.columns) return found;
	const c = problem.currency;
	// Unit amounts in the currency's minor units and up to four more decimals, with thousands separators.
	const money = (value: number) => formatUnitPrice(value, c);
	model.rows.forEach((meaning, row) => {
		const dual = outcome.rowDuals![row]!;
		if (meaning.kind === 'cover') {
			found.coverPrices.push({
				item: meaning.item,
				pricePerUnit: dual,
				text: `one more unit of ${meaning.item} would cost ${money(dual)} ${c}`
			});
		}
		if (meaning.kind === 'capacity' && Math.abs(dual) > 1e-9) {
			found.capacityPrices.push({
				supplier: meaning.supplier,
				valuePerUnit: -dual,
				text: `one more unit of capacity at ${meaning.supplier} would save ${money(-dual)} ${c}`
			});
		}
	});
	const winning = new Set(result.awards.map((l) => `${l.supplier}|${l.item}`));
	model.columns.forEach((meaning, j) => {
		if (meaning.kind !== 'tier' || meaning.tier !== 0) return;
		const bid = problem.bids[meaning.bid]!;
		if (winning.has(`${bid.supplier}|${bid.item}`) || model.colUpper[j]! <= 0) return;
		// A column in steps (whole units, packs) costs a step: its reduced cost is per step.
		const reduced = outcome.reducedCosts![j]! / (meaning.step ?? 1);
		if (reduced <= 1e-9) return;
		const threshold = bid.unitPrice - reduced;
		found.losingBids.push({
			supplier: bid.supplier,
			item: bid.item,
			unitPrice: bid.unitPrice,
			winsBelow: threshold,
			text: `${bid.supplier} would start to win ${bid.item} below ${money(threshold)} ${c}`
		});
	});
	return found;
}
