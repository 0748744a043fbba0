// Whole units and pack sizes: which items are counted (a case, a pair, a pallet) rather than measured
// (kilograms, litres, metres), and the step each bid's quantity moves in.
//
// Unit codes are UN/CEFACT Recommendation 20 ("Codes for Units of Measure Used in International Trade").
// The counting codes below are from that list (from memory of its annex: C62 "one", H87 "piece", EA
// "each", PR "pair", SET, DZN "dozen", GRO "gross", NAR "number of articles", NPR "number of pairs", NMP
// "number of packs"); since its revision 8 the list also carries the package types of Recommendation 21
// as X followed by their two-character code (XBX box, XCT carton, XPX pallet, ...), each counted whole.
// Every other code (KGM, LTR, MTR, HUR, ...) is taken as measured, and so is an item with no unit. An
// item's `wholeUnits` says it outright and wins over its code.
import type { AwardProblem } from './problem';

type Item = AwardProblem['items'][number];
type Bid = AwardProblem['bids'][number];

export const COUNTED_UNITS: ReadonlySet<string> = new Set([
	'C62',
	'H87',
	'EA',
	'PR',
	'SET',
	'DZN',
	'GRO',
	'NAR',
	'NPR',
	'NMP'
]);

const PACKAGE_TYPE = /^X[A-Z0-9]{2}$/;

/** Whether an item's quantities are whole numbers: its `wholeUnits`, else what its unit code counts. */
export function countedWhole(item: Pick<Item, 'unit' | 'wholeUnits'>): boolean {
	if (item.wholeUnits !== undefined) return item.wholeUnits;
	return item.unit !== undefined && (COUNTED_UNITS.has(item.unit) || PACKAGE_TYPE.test(item.unit));
}

/** How many decimals the pack sizes may have: they are compared as whole millionths. */
const SCALE = 1e6;

const gcd = (a: number, b: number): number => {
	while (b) [a, b] = [b, a % b];
	return a;
};

/**
 * The least common multiple of two positive sizes, compared in millionths (a pack of 0.25 kg and an
 * order multiple of 1 kg step in 1 kg).
 */
export function commonMultiple(a: number, b: number): number {
	const [x, y] = [Math.round(a * SCALE), Math.round(b * SCALE)];
	if (x <= 0 || y <= 0) return Math.max(a, b);
	return ((x / gcd(x, y)) * y) / SCALE;
}

/**
 * The step a bid's quantity moves in, or 0 when it may be any amount: the item's order multiple and the
 * bid's pack size together (their least common multiple), else 1 for an item counted in whole units.
 */
export function stepOf(
	item: Pick<Item, 'unit' | 'wholeUnits' | 'orderMultiple'>,
	bid: Pick<Bid, 'packSize'>
): number {
	const sizes = [item.orderMultiple, bid.packSize].filter((s): s is number => s !== undefined);
	if (sizes.length === 0) return countedWhole(item) ? 1 : 0;
	return sizes.reduce(commonMultiple);
}

/** Whether a quantity is a whole number of steps (within a millionth of a step). */
export function onStep(quantity: number, step: number): boolean {
	if (step <= 0) return true;
	const steps = quantity / step;
	return Math.abs(steps - Math.round(steps)) <= 1e-6 * Math.max(1, Math.abs(steps));
}

/**
 * The most of an item an award may hold. Awards in steps cannot always meet a demand exactly (1,000
 * units from a supplier selling in 12s), so the cover may round up by less than the largest step of the
 * item's bids: up to d + step − 1 for whole units, d + step for measured ones. Without steps: exactly d.
 */
export function mostOfItem(item: Item, largestStep: number): number {
	if (largestStep === 0) return item.quantity;
	return item.quantity + largestStep - (countedWhole(item) ? 1 : 0);
}

/** The steps of every bid (by position in problem.bids), and the most of each item an award may hold. */
export function stepsOf(problem: AwardProblem): { bidStep: number[]; most: Map<string, number> } {
	const items = new Map(problem.items.map((i) => [i.ref, i]));
	const largest = new Map<string, number>();
	const bidStep = problem.bids.map((bid) => {
		const step = stepOf(items.get(bid.item)!, bid);
		largest.set(bid.item, Math.max(largest.get(bid.item) ?? 0, step));
		return step;
	});
	const most = new Map(problem.items.map((i) => [i.ref, mostOfItem(i, largest.get(i.ref) ?? 0)]));
	return { bidStep, most };
}
