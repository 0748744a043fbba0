// Changing a run's allocation by hand: lock an item to a supplier, move a quantity from one supplier to
// another, or exclude a supplier from an item. A preview prices the changed allocation at once (its total,
// the change against the run, each change's own cost, the rules it breaks by the checker of the engine);
// saving solves the plan again with each change as a fixed rule, so the engine fills in the rest at least
// cost, and stores the result as a new run of the plan that names the run it came from and every change.
import { z } from 'zod';
import { allocationCost, checkAllocation } from '$lib/award/core/check';
import { priceAtQuantity } from '$lib/award/core/prices';
import { parseProblem, type AwardProblem, type AwardRule } from '$lib/award/core/problem';
import { onStep, stepsOf } from '$lib/award/core/units';
import type { AwardLine } from '$lib/award/core/result';
import type { SessionUser } from '../auth/session-user';
import { now } from '../clock';
import { runExclusions } from '../db/abnormally-low';
import { db } from '../db/knex';
import type { ManualChange, RunRow } from '../db/tables';
import { buyerOnly } from './award-plans';
import { findRun, queueRun } from './award-runs';
import { RuleViolation } from './errors';

/** What the buyer asks for, as the form sends it. */
export const changeRequestSchema = z.discriminatedUnion('kind', [
	z.object({ kind: z.literal('lock'), item: z.string().trim().min(1), supplier: z.string().min(1) }),
	z.object({
		kind: z.literal('move'),
		item: z.string().trim().min(1),
		supplier: z.string().min(1),
		to: z.string().min(1),
		quantity: z.number().finite().gt(0)
	}),
	z.object({ kind: z.literal('exclude'), item: z.string().trim().min(1), supplier: z.string().min(1) })
]);
export type ChangeRequest = z.infer<typeof changeRequestSchema> & { justification?: string };

/** A change costs money when it adds more than this to the total (a cent in most currencies). */
const COSTS_MONEY = 0.005;
const QUANTITY_TOLERANCE = 1e-9;
export const JUSTIFICATION_MIN = 10;
export const JUSTIFICATION_MAX = 2000;

export interface PricedChange {
	request: ChangeRequest;
	text: string;
	costChange: number;
	needsJustification: boolean;
}

export interface Preview {
	runTotal: number;
	total: number;
	changes: PricedChange[];
	/** The rules the changed allocation breaks, in the checker's words (each names its rule and by how much). */
	broken: string[];
	/** The items changed: each supplier's quantity and cost before and after. */
	items: { item: string; unit: string; before: Split[]; after: Split[] }[];
}

interface Split {
	supplier: string;
	quantity: number;
	cost: number;
}

type Allocation = Map<string, Map<string, number>>;

/** The price a bid charges for a quantity: its own, or the all-units break that quantity reaches. */
const unitPrice = (bid: AwardProblem['bids'][number], quantity: number) =>
	priceAtQuantity(bid, quantity, QUANTITY_TOLERANCE);

function describeChange(change: ChangeRequest, unit: string): string {
	if (change.kind === 'lock') return `${change.item}: all of it to ${change.supplier}`;
	if (change.kind === 'exclude') return `${change.item}: nothing to ${change.supplier}`;
	return `${change.item}: ${change.quantity} ${unit} from ${change.supplier} to ${change.to}`;
}

/** The run to change: finished, with an allocation, on an event not yet awarded; buyers only. */
async function runToAdjust(user: SessionUser, runId: string, eventId?: string) {
	const { run, event } = await findRun(user, runId, eventId);
	await buyerOnly(user, event.id);
	if (event.state === 'awarded') throw new RuleViolation('The event is awarded already.', undefined, 409);
	if (run.status !== 'done' || !run.result || run.result.totalCost === null)
		throw new RuleViolation('Only a finished run with an allocation can be changed by hand.', undefined, 409);
	return { run, event };
}

/**
 * Applies the changes in order to the run's allocation and prices the result. Each change is checked
 * against the bids (a supplier can only receive an item it bid for, up to the bid's maximum), and a
 * change that cannot apply is refused naming the change by its number.
 */
export function applyChanges(run: Pick<RunRow, 'problem' | 'result'>, requests: ChangeRequest[]): Preview {
	const problem = run.problem;
	const result = run.result!;
	const itemOf = new Map(problem.items.map((i) => [i.ref, i]));
	const bidOf = new Map(problem.bids.map((b) => [`${b.item}|${b.supplier}`, b]));
	// Each bid's step (1 for whole units, its pack size, the item's order multiple; 0 for continuous).
	const { bidStep } = stepsOf(problem);
	const stepOfBid = new Map(problem.bids.map((b, k) => [b, bidStep[k]!]));
	const allocation: Allocation = new Map();
	const bundled = new Set<string>();
	for (const line of result.awards) {
		if (line.bundle) {
			bundled.add(line.item);
			continue;
		}
		const split = allocation.get(line.item) ?? new Map<string, number>();
		split.set(line.supplier, (split.get(line.supplier) ?? 0) + line.quantity);
		allocation.set(line.item, split);
	}
	const itemCost = (item: string, split: Map<string, number> | undefined) =>
		[...(split ?? [])].reduce((a, [s, q]) => a + q * unitPrice(bidOf.get(`${item}|${s}`)!, q), 0);
	const priced: PricedChange[] = [];
	const touched = new Map<string, Map<string, number>>();
	/** Suppliers an earlier change excluded from an item, by item: no later change gives them any of it. */
	const excluded = new Map<string, Map<string, number>>();
	requests.forEach((request, k) => {
		const number = `Change ${k + 1}`;
		const item = itemOf.get(request.item);
		if (!item)
			throw new RuleViolation(`${number}: "${request.item}" is not an item of this event.`, 'changes', 422);
		if (bundled.has(item.ref))
			throw new RuleViolation(
				`${number}: ${item.ref} is awarded within a bundle offer; exclude the bundle's supplier from it instead, or change another run.`,
				'changes',
				422
			);
		const bidFor = (supplier: string) => {
			const bid = bidOf.get(`${item.ref}|${supplier}`);
			if (!bid)
				throw new RuleViolation(`${number}: ${supplier} did not bid for ${item.ref}.`, 'changes', 422);
			return bid;
		};
		const out = excluded.get(item.ref) ?? new Map<string, number>();
		const receives = (supplier: string) => {
			bidFor(supplier);
			if (out.has(supplier))
				throw new RuleViolation(
					`${number}: change ${out.get(supplier)! + 1} excluded ${supplier} from ${item.ref}.`,
					'changes',
					422
				);
		};
		const split = new Map(allocation.get(item.ref) ?? []);
		if (!touched.has(item.ref)) touched.set(item.ref, new Map(split));
		const before = itemCost(item.ref, split);
		const fits = (supplier: string, quantity: number) => {
			const step = stepOfBid.get(bidFor(supplier))!;
			if (!onStep(quantity, step))
				throw new RuleViolation(
					`${number}: ${supplier} would get ${quantity} of ${item.ref}, which goes in ${step === 1 ? 'whole units' : `steps of ${step}`}.`,
					'changes',
					422
				);
			const max = bidFor(supplier).maxQuantity;
			if (max !== undefined && quantity > max + QUANTITY_TOLERANCE)
				throw new RuleViolation(
					`${number}: ${supplier} bid for at most ${max} of ${item.ref}; this change would give it ${quantity}.`,
					'changes',
					422
				);
		};
		if (request.kind === 'lock') {
			receives(request.supplier);
			fits(request.supplier, item.quantity);
			split.clear();
			split.set(request.supplier, item.quantity);
		} else if (request.kind === 'move') {
			if (request.supplier === request.to)
				throw new RuleViolation(`${number}: choose two different suppliers.`, 'changes', 422);
			const has = split.get(request.supplier) ?? 0;
			if (request.quantity > has + QUANTITY_TOLERANCE)
				throw new RuleViolation(
					`${number}: ${request.supplier} has ${has} of ${item.ref} in this allocation; it cannot give ${request.quantity}.`,
					'changes',
					422
				);
			const receiving = (split.get(request.to) ?? 0) + request.quantity;
			receives(request.to);
			fits(request.to, receiving);
			const left = has - request.quantity;
			if (left > QUANTITY_TOLERANCE) fits(request.supplier, left);
			if (left > QUANTITY_TOLERANCE) split.set(request.supplier, left);
			else split.delete(request.supplier);
			split.set(request.to, receiving);
		} else {
			// Its quantity goes to the other bids for the item, lowest landed price first, each up to its maximum.
			const freed = split.get(request.supplier) ?? 0;
			bidFor(request.supplier);
			split.delete(request.supplier);
			out.set(request.supplier, k);
			excluded.set(item.ref, out);
			let left = freed;
			const others = problem.bids
				.filter((b) => b.item === item.ref && !out.has(b.supplier))
				.sort((a, b) => unitPrice(a, item.quantity) - unitPrice(b, item.quantity));
			for (const bid of others) {
				if (left <= QUANTITY_TOLERANCE) break;
				const has = split.get(bid.supplier) ?? 0;
				const room = (bid.maxQuantity ?? Infinity) - has;
				const take = Math.min(room, left);
				if (take <= QUANTITY_TOLERANCE) continue;
				split.set(bid.supplier, has + take);
				left -= take;
			}
			if (left > QUANTITY_TOLERANCE)
				throw new RuleViolation(
					`${number}: no other bid for ${item.ref} can take the ${freed} ${item.unit ?? 'units'} ${request.supplier} has.`,
					'changes',
					422
				);
		}
		allocation.set(item.ref, split);
		const costChange = itemCost(item.ref, split) - before;
		priced.push({
			request,
			text: describeChange(request, item.unit ?? 'units'),
			costChange,
			needsJustification: costChange > COSTS_MONEY
		});
	});
	const lines: AwardLine[] = result.awards.filter((l) => l.bundle);
	for (const [item, split] of allocation)
		for (const [supplier, quantity] of split) {
			if (quantity <= QUANTITY_TOLERANCE) continue;
			const price = unitPrice(bidOf.get(`${item}|${supplier}`)!, quantity);
			lines.push({ supplier, item, quantity, unitPrice: price, cost: price * quantity });
		}
	const uncovered = new Set((result.uncoveredItems ?? []).map((u) => u.item));
	const splitOf = (item: string, split: Map<string, number>) =>
		[...split]
			.filter(([, q]) => q > QUANTITY_TOLERANCE)
			.map(([supplier, quantity]) => ({
				supplier,
				quantity,
				cost: quantity * unitPrice(bidOf.get(`${item}|${supplier}`)!, quantity)
			}))
			.sort((a, b) => a.supplier.localeCompare(b.supplier));
	const total = allocationCost(problem, lines);
	const broken = checkAllocation(problem, lines, uncovered);
	// Changes that together cost more than the run (fixed costs per award included) or break a rule need
	// a justification each, whatever each one's own figure.
	if (total - result.totalCost! > COSTS_MONEY || broken.length)
		for (const change of priced) change.needsJustification = true;
	return {
		runTotal: result.totalCost!,
		total,
		changes: priced,
		broken,
		items: [...touched].map(([item, before]) => ({
			item,
			unit: itemOf.get(item)!.unit ?? '',
			before: splitOf(item, before),
			after: splitOf(item, allocation.get(item)!)
		}))
	};
}

/** The rules a change becomes in the adjusted run's plan: fixed quantities, or an exclusion. */
export function changeRules(preview: Preview, number: (k: number) => string): AwardRule[] {
	const after = new Map(preview.items.map((i) => [i.item, i.after]));
	return preview.changes.flatMap(({ request, text }, k): AwardRule[] => {
		// Labels are at most 300 characters (problem.ts); long refs and names are cut, never the number.
		const label = `${number(k)}: ${text}`.slice(0, 300);
		const quantityOf = (supplier: string) =>
			after.get(request.item)!.find((s) => s.supplier === supplier)?.quantity ?? 0;
		const fixed = (supplier: string): AwardRule => ({
			type: 'fixed_quantity',
			label,
			scope: { item: request.item },
			who: { supplier },
			quantity: quantityOf(supplier)
		});
		if (request.kind === 'lock') return [fixed(request.supplier)];
		if (request.kind === 'move') return [fixed(request.supplier), fixed(request.to)];
		return [{ type: 'exclude', label, scope: { item: request.item }, who: { supplier: request.supplier } }];
	});
}

export async function previewAdjustment(
	user: SessionUser,
	runId: string,
	eventId: string | undefined,
	requests: ChangeRequest[]
) {
	const { run } = await runToAdjust(user, runId, eventId);
	return applyChanges(run, requests);
}

/**
 * Solves the plan again with the changes as fixed rules and stores it as a new run. Every change that
 * costs money needs a justification; a later change on the same item and supplier fixes the final split
 * (each rule holds the quantity after all changes).
 */
export async function saveAdjustedRun(
	user: SessionUser,
	runId: string,
	eventId: string | undefined,
	requests: ChangeRequest[]
) {
	if (!requests.length) throw new RuleViolation('Make at least one change first.', 'changes', 422);
	const { run, event } = await runToAdjust(user, runId, eventId);
	const preview = applyChanges(run, requests);
	preview.changes.forEach(({ request, needsJustification }, k) => {
		const text = request.justification?.trim() ?? '';
		if (needsJustification && text.length < JUSTIFICATION_MIN)
			throw new RuleViolation(
				`Change ${k + 1} costs money: say why, in at least ${JUSTIFICATION_MIN} characters.`,
				`justification${k}`,
				422
			);
		if (text.length > JUSTIFICATION_MAX)
			throw new RuleViolation(
				`Change ${k + 1}: the justification is longer than ${JUSTIFICATION_MAX} characters.`,
				`justification${k}`,
				422
			);
	});
	const at = now().toISOString();
	const changes: ManualChange[] = preview.changes.map(({ request, costChange }) => ({
		kind: request.kind,
		item: request.item,
		supplier: request.supplier,
		...(request.kind === 'move' ? { to: request.to, quantity: request.quantity } : {}),
		justification: request.justification?.trim() ?? '',
		costChange,
		by: { id: user.id, name: user.name },
		at,
		onRun: run.number
	}));
	// An adjusted run changed again keeps the earlier changes: its problem still holds their rules.
	const inherited = run.adjustments ?? [];
	const problem: AwardProblem = {
		...run.problem,
		rules: [
			...run.problem.rules,
			...changeRules(preview, (k) => `Manual change ${k + 1} on run ${run.number}`)
		]
	};
	const parsed = parseProblem(problem);
	if (!parsed.ok)
		throw new RuleViolation(
			`These changes cannot be solved: ${parsed.problems.slice(0, 3).join('; ')}`,
			'changes',
			422
		);
	// Filed under the plan it came from, named so nobody takes it for a plain run of that plan.
	const name = run.adjusted_from ? run.plan_name : `${run.plan_name} (changed by hand)`;
	// Its problem is the run's, so it was built without the same excluded lines and bids: it says so too.
	const excluded = (await runExclusions(db(), run.id)) ?? [];
	return queueRun(
		user,
		event,
		{ id: run.plan_id, name },
		problem,
		{ from: run, changes: [...inherited, ...changes] },
		{ excluded }
	);
}
