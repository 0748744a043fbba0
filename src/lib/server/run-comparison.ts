// Two to four finished runs of one event side by side: their totals against a reference run, spend by
// supplier and by lot, and the items each allocates differently. A pure function of the runs' results
// and their problems' items, so the page, the API and the workbook show the same figures.
import type { AwardResult } from '$lib/award/core/engine';
import { minorUnits } from '$lib/format';
import { COMPARISON_PAGE_ITEMS } from '$lib/paging';

export interface ComparedRunInput {
	id: string;
	number: number;
	plan: string;
	status: string;
	/** A finished run's result with an allocation (the caller leaves out runs without one). */
	result: AwardResult;
	/** An adjusted run: the run it was changed from (its number, when that run is still there). */
	adjustedFrom: { id: string; number: number | null } | null;
	manualChanges: number;
}

/** An item as the runs' problems list it; the first run's order is the order of the tables. */
export interface ComparedItem {
	ref: string;
	lot: string | null;
	unit: string | null;
}

export interface ComparisonOptions {
	/** The run the differences are taken against; the cheapest run when absent or not among the runs. */
	reference?: string;
	/** 1-based page of the items allocated differently. */
	page?: number;
	pageSize?: number;
	/** Suppliers drawn one by one in the chart; the rest share one group. */
	chartSuppliers?: number;
}

export interface SplitLine {
	supplier: string;
	quantity: number;
}

export interface DifferingItem {
	item: string;
	lot: string | null;
	unit: string | null;
	/** Per run: who gets how much of the item (empty when the run awards none of it). */
	splits: SplitLine[][];
	/** Per run: what the item costs in it (null when the run awards none of it). */
	costs: (number | null)[];
	/** Per run: its cost minus the reference run's (null when either awards none of it). */
	differences: (number | null)[];
	/** The largest of the absolute differences: the rows are sorted by it. */
	largest: number;
}

export type RunComparison = ReturnType<typeof compareRuns>;

const QUANTITY_DIGITS = 6;
const roundQuantity = (q: number) => Math.round(q * 10 ** QUANTITY_DIGITS) / 10 ** QUANTITY_DIGITS;

export function compareRuns(
	runs: ComparedRunInput[],
	items: ComparedItem[],
	options: ComparisonOptions = {}
) {
	const currency = runs[0]?.result.currency ?? 'EUR';
	// Below half a minor unit two amounts print the same: no difference worth a row.
	const tolerance = 0.5 * 10 ** -minorUnits(currency);
	const cheapest = runs.reduce<ComparedRunInput | undefined>(
		(best, run) =>
			!best || (run.result.totalCost ?? Infinity) < (best.result.totalCost ?? Infinity) ? run : best,
		undefined
	);
	const reference = runs.find((r) => r.id === options.reference) ?? cheapest;
	const referenceIndex = reference ? runs.indexOf(reference) : 0;

	const itemOrder = new Map<string, ComparedItem>();
	for (const item of items) if (!itemOrder.has(item.ref)) itemOrder.set(item.ref, item);

	const perRun = runs.map((run) => {
		const splits = new Map<string, Map<string, number>>();
		const itemCosts = new Map<string, number>();
		const supplierCosts = new Map<string, number>();
		let linesCost = 0;
		for (const line of run.result.awards) {
			if (!itemOrder.has(line.item)) itemOrder.set(line.item, { ref: line.item, lot: null, unit: null });
			const split = splits.get(line.item) ?? new Map<string, number>();
			split.set(line.supplier, (split.get(line.supplier) ?? 0) + line.quantity);
			splits.set(line.item, split);
			itemCosts.set(line.item, (itemCosts.get(line.item) ?? 0) + line.cost);
			supplierCosts.set(line.supplier, (supplierCosts.get(line.supplier) ?? 0) + line.cost);
			linesCost += line.cost;
		}
		return { splits, itemCosts, supplierCosts, linesCost };
	});

	const referenceTotal = reference?.result.totalCost ?? null;
	const summaries = runs.map((run, k) => {
		const { totalCost, baselineCost, savings } = run.result;
		const difference =
			totalCost !== null && referenceTotal !== null && k !== referenceIndex
				? totalCost - referenceTotal
				: null;
		return {
			id: run.id,
			number: run.number,
			plan: run.plan,
			status: run.status,
			outcome: run.result.status,
			reference: k === referenceIndex,
			totalCost,
			baselineCost,
			savings,
			savingsShare: savings !== null && baselineCost ? savings / baselineCost : null,
			difference,
			differenceShare: difference !== null && referenceTotal ? difference / referenceTotal : null,
			suppliers: new Set(run.result.awards.filter((l) => l.quantity > 0).map((l) => l.supplier)).size,
			splitItems: [...perRun[k]!.splits.values()].filter((split) => split.size > 1).length,
			uncoveredItems: run.result.uncoveredItems.length,
			adjustedFrom: run.adjustedFrom,
			manualChanges: run.manualChanges
		};
	});

	const supplierNames = [...new Set(perRun.flatMap((r) => [...r.supplierCosts.keys()]))];
	const suppliers = supplierNames
		.map((supplier) => ({ supplier, costs: perRun.map((r) => r.supplierCosts.get(supplier) ?? 0) }))
		.sort((a, b) => Math.max(...b.costs) - Math.max(...a.costs) || a.supplier.localeCompare(b.supplier));
	const shown = Math.max(1, options.chartSuppliers ?? 10);
	const chart =
		suppliers.length > shown + 1
			? [
					...suppliers.slice(0, shown).map((s) => ({ label: s.supplier, costs: s.costs, others: 0 })),
					{
						label: `Other suppliers (${suppliers.length - shown})`,
						costs: runs.map((_, k) => suppliers.slice(shown).reduce((sum, s) => sum + s.costs[k]!, 0)),
						others: suppliers.length - shown
					}
				]
			: suppliers.map((s) => ({ label: s.supplier, costs: s.costs, others: 0 }));

	const lotNames: (string | null)[] = [];
	for (const item of itemOrder.values())
		if (item.lot !== null && !lotNames.includes(item.lot)) lotNames.push(item.lot);
	if ([...itemOrder.values()].some((i) => i.lot === null)) lotNames.push(null);
	const lotOf = (ref: string) => itemOrder.get(ref)?.lot ?? null;
	const lots = lotNames
		.map((lot) => ({
			lot,
			costs: perRun.map((r) =>
				[...r.itemCosts].reduce((sum, [item, cost]) => (lotOf(item) === lot ? sum + cost : sum), 0)
			)
		}))
		.filter((l) => l.costs.some((c) => c !== 0));
	// The total of a plan with a cost per award (administration) is more than its lines' costs.
	const awardCosts = runs.map((run, k) => (run.result.totalCost ?? 0) - perRun[k]!.linesCost);
	const hasAwardCosts = awardCosts.some((c) => Math.abs(c) >= tolerance);

	const describeSplit = (split: Map<string, number> | undefined): SplitLine[] =>
		[...(split ?? [])]
			.map(([supplier, quantity]) => ({ supplier, quantity: roundQuantity(quantity) }))
			.filter((l) => l.quantity !== 0)
			.sort((a, b) => a.supplier.localeCompare(b.supplier));
	const splitKey = (lines: SplitLine[]) =>
		lines.map((l) => `${l.supplier}\u0000${l.quantity}`).join('\u0001');
	const order = [...itemOrder.keys()];
	const differing: DifferingItem[] = [];
	for (const ref of order) {
		const splits = perRun.map((r) => describeSplit(r.splits.get(ref)));
		const costs = perRun.map((r) => (r.splits.has(ref) ? r.itemCosts.get(ref)! : null));
		const base = costs[referenceIndex] ?? null;
		const differences = costs.map((c) => (c === null || base === null ? null : c - base));
		const sameSplit = new Set(splits.map(splitKey)).size === 1;
		const sameCost = differences.every((d) => d === null || Math.abs(d) < tolerance);
		if (sameSplit && sameCost) continue;
		const item = itemOrder.get(ref)!;
		differing.push({
			item: ref,
			lot: item.lot,
			unit: item.unit,
			splits,
			costs,
			differences,
			largest: Math.max(0, ...differences.map((d) => (d === null ? 0 : Math.abs(d))))
		});
	}
	const position = new Map(order.map((ref, k) => [ref, k]));
	differing.sort((a, b) => b.largest - a.largest || position.get(a.item)! - position.get(b.item)!);

	const pageSize = Math.max(1, options.pageSize ?? COMPARISON_PAGE_ITEMS);
	const pages = Math.max(1, Math.ceil(differing.length / pageSize));
	const page = Math.min(pages, Math.max(1, Math.trunc(options.page ?? 1) || 1));
	return {
		currency,
		referenceIndex,
		runs: summaries,
		suppliers,
		chart,
		lots,
		awardCosts: hasAwardCosts ? awardCosts : null,
		totals: summaries.map((s) => s.totalCost),
		differing: {
			total: differing.length,
			page,
			pages,
			pageSize,
			rows: differing.slice((page - 1) * pageSize, page * pageSize)
		}
	};
}
