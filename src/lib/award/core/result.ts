// Reading a solved model back into the trade's words: who gets how much of what, at what price.
import type { AwardModel } from './model-builder';
import { bundleShares } from './prices';
import type { AwardProblem } from './problem';

export interface AwardLine {
	supplier: string;
	item: string;
	quantity: number;
	unitPrice: number;
	cost: number;
	/** Set when the line comes from a bundle offer. */
	bundle?: string;
}

export interface SupplierTotal {
	supplier: string;
	quantity: number;
	cost: number;
	items: number;
}

/** Quantities below this are solver noise, not awards. */
const EPSILON = 1e-7;

const round = (value: number, digits = 9) => Math.round(value * 10 ** digits) / 10 ** digits;

/**
 * The units a tier column's value stands for: value × step, an integer column's value taken as the
 * whole number the solver meant (it returns 11.9999999 for 12 within its integrality tolerance).
 */
export function tierQuantity(model: AwardModel, column: number, value: number): number {
	const meaning = model.columns[column]!;
	const step = (meaning.kind === 'tier' && meaning.step) || 1;
	return model.integrality[column] ? round(Math.round(value) * step) : value * step;
}

/**
 * Tiers and (supplier, item) pairs whose yes/no column the solver left at 0. A MIP solver accepts a
 * binary within its integrality tolerance of 0 (HiGHS: 1e-6), and x <= M·z then lets a tiny quantity
 * through on a tier or a win that is "not used" (2.6e-6 units at a price the bid does not give): such a
 * quantity is not an award.
 */
function switchedOff(model: AwardModel, columns: Float64Array) {
	const tiers = new Set<string>();
	const pairs = new Set<string>();
	model.columns.forEach((meaning, j) => {
		if (columns[j]! >= 0.5) return;
		if (meaning.kind === 'tier_used') tiers.add(`${meaning.bid}|${meaning.tier}`);
		if (meaning.kind === 'wins') pairs.add(`${meaning.supplier}\u0000${meaning.item}`);
	});
	return { tiers, pairs };
}

/** `mip`: the columns are a MIP solver's answer (its yes/no columns mean 0 or 1), not an LP's. */
export function awardLines(
	problem: AwardProblem,
	model: AwardModel,
	columns: Float64Array,
	mip = false
): AwardLine[] {
	const lines: AwardLine[] = [];
	const byBid = new Map<number, { quantity: number; cost: number }>();
	const off = mip ? switchedOff(model, columns) : { tiers: new Set<string>(), pairs: new Set<string>() };
	const isOff = (bid: number, tier: number) => {
		const b = problem.bids[bid]!;
		return off.tiers.has(`${bid}|${tier}`) || off.pairs.has(`${b.supplier}\u0000${b.item}`);
	};
	model.columns.forEach((meaning, j) => {
		const value = columns[j]!;
		if (meaning.kind === 'tier' && value > EPSILON && !isOff(meaning.bid, meaning.tier)) {
			const quantity = tierQuantity(model, j, value);
			if (quantity === 0) return;
			const entry = byBid.get(meaning.bid) ?? { quantity: 0, cost: 0 };
			entry.quantity += quantity;
			entry.cost += quantity * meaning.unitPrice;
			byBid.set(meaning.bid, entry);
		}
		if (meaning.kind === 'bundle' && value > 0.5) {
			const bundle = problem.bundles[meaning.bundle]!;
			const shares = bundleShares(problem, bundle);
			for (const line of bundle.items) {
				const cost = bundle.price * shares.get(line.item)!;
				lines.push({
					supplier: bundle.supplier,
					item: line.item,
					quantity: line.quantity,
					unitPrice: round(cost / line.quantity),
					cost: round(cost),
					bundle: bundle.ref
				});
			}
		}
	});
	for (const [b, entry] of byBid) {
		const bid = problem.bids[b]!;
		lines.push({
			supplier: bid.supplier,
			item: bid.item,
			quantity: round(entry.quantity),
			unitPrice: round(entry.cost / entry.quantity),
			cost: round(entry.cost)
		});
	}
	const order = new Map(problem.items.map((item, index) => [item.ref, index]));
	return lines.sort(
		(a, b) => order.get(a.item)! - order.get(b.item)! || a.supplier.localeCompare(b.supplier)
	);
}

export function supplierTotals(lines: AwardLine[]): SupplierTotal[] {
	const totals = new Map<string, SupplierTotal>();
	for (const line of lines) {
		const total = totals.get(line.supplier) ?? { supplier: line.supplier, quantity: 0, cost: 0, items: 0 };
		total.quantity = round(total.quantity + line.quantity);
		total.cost = round(total.cost + line.cost);
		total.items += 1;
		totals.set(line.supplier, total);
	}
	return [...totals.values()].sort((a, b) => b.cost - a.cost);
}

export function baselineCost(problem: AwardProblem, uncovered: Set<string>): number | null {
	const priced = problem.items.filter((i) => !uncovered.has(i.ref));
	if (!priced.length || priced.some((i) => i.baselineUnitPrice === undefined)) return null;
	return round(priced.reduce((sum, i) => sum + i.quantity * i.baselineUnitPrice!, 0));
}
