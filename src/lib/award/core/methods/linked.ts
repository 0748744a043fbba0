// "Relax the links" (method `lagrangian`): for large events whose rules link items (capacities, lot
// and event shares and spend caps, lot and event supplier counts, fixed costs per supplier, bundles).
//
// The bound (Lagrangian relaxation, Held and Karp 1971; Fisher 1981, Management Science 27(1)): price
// every linking row at its LP dual μ (blocks.ts says which rows link); then the items fall apart, each
// a small exact MIP at the prices c − Aᵀμ. An item whose LP split is already whole (once its yes/no
// choices are rounded up) and costs the same at those prices needs no solve: by complementary slackness
// it is optimal for its own LP, hence for its MIP. The others are solved in batches on the pool:
//   L(μ) = Σ_items min_item (c − Aᵀμ)x + Σ_rows μ·(bound the dual points at)  ≤  the optimum,
// and L(μ) ≥ the LP bound. An item left unsolved when time runs out counts at its LP value (still a
// bound). The global block (a supplier winning part of a lot or the event, with the lot and event
// supplier counts over them) is one small MIP at its prices.
//
// The award (repair): the global block's answer at those prices chooses the suppliers that may win in
// each lot and over the event (the rest are shut out), and the LP is solved again under that choice.
// Items whose split is already whole keep it; the others take their own MIP's answer where it keeps
// every linking row with what the rest holds, and are otherwise solved again in turn as small MIPs that
// keep the linking rows (with a penalised give-way, so one batch never blocks the pass), the rest held
// where it stands (relax-and-fix). A last small MIP sets the group indicators (fixed costs, counts).
// When a linking row still does not hold, the method has no award; choose.ts then falls back to the
// full MIP in the time left.
//
// With the award, a second bound relaxes the other way (supplier-bound.ts): the cover rows priced, each
// supplier kept whole, the event's supplier count kept exactly. The reported bound is the higher one.
import { buildModel, type AwardModel, type ColumnMeaning } from '../model';
import type { AwardProblem } from '../problem';
import { awardLines } from '../result';
import type { SolveOptions, SolveOutcome, SolveStatus, Solver } from '../solver';
import { modelSize, type Solved } from '../types';
import { GLOBAL, LINKING, blocksOf, rowActivities, rowExcess, subModel, type Blocks } from './blocks';
import type { Clock } from './clock';
import { supplierBound } from './supplier-bound';
import type { Progress } from '../types';

/** Sub-models sent to the pool at a time (two threads on two cores, and one waiting for each). */
const IN_FLIGHT = 4;

/**
 * A sub-model's proven lower bound: a MIP's dual bound once it has an answer, an LP's optimum; none
 * from a solve that stopped before (HiGHS then reports a dual bound of 0, which proves nothing).
 */
function provenBound(outcome: SolveOutcome): number | null {
	const value = outcome.isMip
		? outcome.status === 'optimal' || outcome.status === 'feasible'
			? outcome.bound
			: null
		: outcome.status === 'optimal'
			? outcome.objective
			: null;
	return value !== null && Number.isFinite(value) ? value : null;
}

/** Items per sub-MIP (independent blocks solved in one model). */
const BATCH_ITEMS = 25;
/** A value this close to a whole number is taken as whole. */
const WHOLE = 1e-6;
/** Relative excess of a row still taken as kept (HiGHS's feasibility tolerance is 1e-7 absolute). */
const KEPT = 1e-7;
/** The same for the award at the end, its integer columns rounded: HiGHS keeps MIP rows to 1e-6. */
const FINAL = 1e-6;
/**
 * Up to this many matrix entries the whole LP (with the integer-only rules relaxed) is solved too, for a
 * stronger bound, once an award is found.
 */
const WHOLE_LP_ENTRIES = 2_000_000;

export interface LinkedOutcome extends Solved {
	/** Best award's columns in the whole model, for a caller that goes on from it. */
	columns: Float64Array | null;
}

/** Prices on the linking rows and the Lagrangian costs and constant they give. */
function lagrangianPrices(model: AwardModel, blocks: Blocks, duals: Float64Array) {
	const mu = new Float64Array(model.numRows);
	let constant = 0;
	for (let r = 0; r < model.numRows; r++) {
		if (blocks.rowBlock[r] !== LINKING) continue;
		const lower = model.rowLower[r]!;
		const upper = model.rowUpper[r]!;
		let y = duals[r]!;
		// A dual must point at a finite bound: ≥ 0 on a lower bound, ≤ 0 on an upper one.
		if (!Number.isFinite(lower)) y = Math.min(0, y);
		if (!Number.isFinite(upper)) y = Math.max(0, y);
		mu[r] = y;
		if (y > 0) constant += y * lower;
		else if (y < 0) constant += y * upper;
	}
	const costs = Float64Array.from(model.colCost);
	for (let j = 0; j < model.numCols; j++)
		for (let k = model.starts[j]!; k < model.starts[j + 1]!; k++) {
			const y = mu[model.indices[k]!]!;
			if (y !== 0) costs[j]! -= y * model.values[k]!;
		}
	return { costs, constant };
}

/**
 * The LP point with each integer column rounded up (a yes/no choice the LP took in part becomes yes),
 * and "s wins part of i" set wherever the point gives s some of i (the LP may not have that column).
 */
function roundedUp(problem: AwardProblem, model: AwardModel, x: Float64Array): Float64Array {
	const out = Float64Array.from(x);
	const quantity = new Map<string, number>();
	const add = (s: string, i: string, q: number) => {
		const key = `${s}\u0000${i}`;
		quantity.set(key, (quantity.get(key) ?? 0) + q);
	};
	for (let j = 0; j < model.numCols; j++) {
		const meaning = model.columns[j]!;
		if (meaning.kind === 'tier' && x[j]! > 0) {
			const bid = problem.bids[meaning.bid]!;
			add(bid.supplier, bid.item, x[j]! * (meaning.step ?? 1));
		}
		if (meaning.kind === 'bundle' && x[j]! > 0) {
			const bundle = problem.bundles[meaning.bundle]!;
			for (const line of bundle.items) add(bundle.supplier, line.item, x[j]! * line.quantity);
		}
		if (!model.integrality[j]) continue;
		const v = x[j]!;
		out[j] = Math.abs(v - Math.round(v)) <= WHOLE ? Math.round(v) : Math.ceil(v);
		out[j] = Math.min(out[j]!, model.colUpper[j]!);
	}
	model.columns.forEach((meaning, j) => {
		if (meaning.kind !== 'wins') return;
		const q = quantity.get(`${meaning.supplier}\u0000${meaning.item}`) ?? 0;
		out[j] = q > WHOLE ? Math.min(1, model.colUpper[j]!) : 0;
	});
	return out;
}

/**
 * Blocks whose rounded LP split keeps their own rows and costs what the LP split costs at the given
 * prices: for them the LP answer is their MIP answer.
 */
function wholeBlocks(
	model: AwardModel,
	blocks: Blocks,
	lp: Float64Array,
	rounded: Float64Array,
	costs: Float64Array
): boolean[] {
	const whole = blocks.columnsOf.map((columns) => {
		let change = 0;
		let scale = 1;
		for (const j of columns) {
			change += costs[j]! * (rounded[j]! - lp[j]!);
			scale += Math.abs(costs[j]! * lp[j]!);
		}
		return Math.abs(change) <= 1e-9 * scale;
	});
	const activity = rowActivities(model, blocks, rounded);
	for (let r = 0; r < model.numRows; r++) {
		const b = blocks.rowBlock[r]!;
		if (b >= 0 && whole[b] && rowExcess(model, r, activity[r]!) > KEPT) whole[b] = false;
	}
	return whole;
}

interface BlockSolves {
	/** L(μ): a lower bound on the model's optimum. */
	bound: number;
	/** The LP point rounded up (roundedUp). */
	rounded: Float64Array;
	/** Each block's own MIP answer at the prices (rounded LP for the blocks not solved). */
	candidate: Float64Array;
	/** Blocks solved (their rounded LP split was not their answer). */
	solved: Set<number>;
	whole: boolean[];
	/** The global block's answer at the prices (null when it has no integer column). */
	global: Float64Array | null;
	/** Every block and the global block solved (else `bound` holds only at the LP's own duals). */
	complete: boolean;
}

/**
 * For each group indicator (s wins part of group G), the share of G's spend the LP gave s, in [0, 1]:
 * how much the LP relied on that supplier there.
 */
function groupSpend(problem: AwardProblem, model: AwardModel, x: Float64Array): number[] {
	const spend = new Map<string, number>();
	const add = (key: string, value: number) => spend.set(key, (spend.get(key) ?? 0) + value);
	const lotOf = new Map(problem.items.map((i) => [i.ref, i.lot]));
	model.columns.forEach((c, j) => {
		const value = x[j]!;
		if (value <= 0) return;
		const record = (supplier: string, item: string, amount: number) => {
			add(`${supplier}\u0000event`, amount);
			add('\u0000event', amount);
			const lot = lotOf.get(item);
			if (lot !== undefined) {
				add(`${supplier}\u0000lot:${lot}`, amount);
				add(`\u0000lot:${lot}`, amount);
			}
		};
		if (c.kind === 'tier') {
			const bid = problem.bids[c.bid]!;
			record(bid.supplier, bid.item, value * model.colCost[j]!);
		}
		if (c.kind === 'bundle') {
			const bundle = problem.bundles[c.bundle]!;
			const first = bundle.items[0]!.item;
			record(bundle.supplier, first, value * bundle.price);
		}
	});
	return model.columns.map((c) =>
		c.kind === 'wins_group'
			? (spend.get(`${c.supplier}\u0000${c.group}`) ?? 0) / Math.max(1e-9, spend.get(`\u0000${c.group}`) ?? 0)
			: 0
	);
}

/**
 * An LP point and its row duals, in the whole model's columns and rows. From an LP of this model, or
 * of the model without the integer-only rules (then its group and win indicators are 0 and their rows
 * have no dual): its duals still price the links, and each item's LP split, optimal for its own
 * relaxed rows, still bounds the item's own MIP from below.
 */
interface Priced {
	x: Float64Array;
	duals: Float64Array;
	objective: number;
}

/** Lagrangian solve of every block at the LP's duals. */
async function solveBlocks(
	problem: AwardProblem,
	model: AwardModel,
	blocks: Blocks,
	lp: Priced,
	solver: Solver,
	clock: Clock,
	options: SolveOptions,
	/** `all`: the duals are not the LP point's own (subgradient steps), so every block is solved. */
	mode: 'lp' | 'all' = 'lp'
): Promise<BlockSolves> {
	const x = lp.x;
	const { costs, constant } = lagrangianPrices(model, blocks, lp.duals);
	const rounded = roundedUp(problem, model, x);
	const whole =
		mode === 'all' ? blocks.columnsOf.map(() => false) : wholeBlocks(model, blocks, x, rounded, costs);
	const candidate = Float64Array.from(rounded);
	const atLp = (columns: readonly number[]) => columns.reduce((a, j) => a + costs[j]! * x[j]!, 0);
	let bound = constant;
	for (let j = 0; j < model.numCols; j++) bound += costs[j]! * x[j]!;
	const skipRow = (r: number) => blocks.rowBlock[r] === LINKING;
	const broken = blocks.columnsOf.flatMap((_, b) => (whole[b] ? [] : [b]));
	const batches: number[][] = [];
	for (let k = 0; k < broken.length; k += BATCH_ITEMS) batches.push(broken.slice(k, k + BATCH_ITEMS));
	const solved = new Set<number>();
	const gap = Math.min(options.gap ?? 1e-6, 1e-6);
	// A few batches in flight at a time (the pool has a thread per core), each started only while time
	// is left: queued all at once, they would each keep the time limit of when they were queued.
	const waiting = [...batches];
	const jobs: Promise<void>[] = Array.from({ length: IN_FLIGHT }, async () => {
		for (let batch = waiting.shift(); batch; batch = waiting.shift()) {
			const left = clock.left();
			if (left <= 0) return;
			const free = batch.flatMap((b) => blocks.columnsOf[b]!);
			const cut = subModel(model, blocks, free, x, { costs, skipRow });
			const outcome = await solver.solve(cut.model, { timeLimit: left, gap });
			const proven = provenBound(outcome);
			if (proven === null) continue;
			// Not clamped at 0: the point need not be this model's LP optimum.
			bound += proven - atLp(free);
			if (outcome.columns) cut.columns.forEach((j, p) => j >= 0 && (candidate[j] = outcome.columns![p]!));
			for (const b of batch) solved.add(b);
		}
	});
	let global: Float64Array | null = null;
	let globalSolved = false;
	const choices = blocks.globalColumns.filter((j) => model.integrality[j]);
	if (!choices.length && mode === 'all') {
		// Continuous columns of no item and no row of their own (spend totals): each at its cheaper bound.
		const at = Float64Array.from(x);
		for (const j of blocks.globalColumns) {
			const c = costs[j]!;
			at[j] = c > 0 ? model.colLower[j]! : c < 0 ? model.colUpper[j]! : x[j]!;
			bound += c * (at[j]! - x[j]!);
		}
		global = at;
		globalSolved = blocks.globalColumns.every((j) => Number.isFinite(at[j]!));
	}
	if (choices.length) {
		jobs.push(
			(async () => {
				// At the LP's duals a group indicator the LP uses costs about 0 (LP optimality), so ties
				// are broken towards the suppliers the LP used most.
				const tieBroken = Float64Array.from(costs);
				const scale = 1e-6 * Math.max(1, Math.abs(lp.objective) / Math.max(1, choices.length));
				const usage = groupSpend(problem, model, x);
				for (const j of blocks.globalColumns) tieBroken[j] = costs[j]! - scale * (usage[j] ?? 0);
				const cut = subModel(model, blocks, blocks.globalColumns, x, {
					costs: tieBroken,
					skipRow: (r) => blocks.rowBlock[r] !== GLOBAL
				});
				const outcome = await solver.solve(cut.model, { timeLimit: Math.max(1, clock.left()), gap });
				const proven = provenBound(outcome);
				if (proven === null || !outcome.columns) return;
				bound += proven - atLp(blocks.globalColumns);
				globalSolved = true;
				global = Float64Array.from(x);
				cut.columns.forEach((j, p) => j >= 0 && (global![j] = outcome.columns![p]!));
			})()
		);
	}
	await Promise.all(jobs);
	// At duals that are not the LP point's own, a block left unsolved has no bound of its own.
	const complete =
		solved.size === broken.length && (globalSolved || !blocks.globalColumns.length || mode === 'lp');
	if (global) for (const j of blocks.globalColumns) candidate[j] = global[j]!;
	return { bound, rounded, candidate, solved, whole, global, complete };
}

/** Columns of the group indicators that count in a lot or event supplier count (rows of the global block). */
function countedGroupColumns(model: AwardModel, blocks: Blocks): Set<number> {
	const counted = new Set<number>();
	for (let r = 0; r < model.numRows; r++) {
		if (blocks.rowBlock[r] !== GLOBAL) continue;
		for (let k = blocks.rowStarts[r]!; k < blocks.rowStarts[r + 1]!; k++) counted.add(blocks.rowColumns[k]!);
	}
	return counted;
}

/** A choice of suppliers: the group indicators left open (shut ones are held at 0). */
function withOpen(model: AwardModel, shuttable: readonly number[], open: ReadonlySet<number>): AwardModel {
	const colLower = Float64Array.from(model.colLower);
	const colUpper = Float64Array.from(model.colUpper);
	for (const j of shuttable) if (!open.has(j)) colUpper[j] = colLower[j] = 0;
	return { ...model, colLower, colUpper };
}

/** Rules only integers express: minimum awards, supplier counts, fixed costs. */
function integerOnlyRules(problem: AwardProblem): Set<number> {
	return new Set(
		problem.rules.flatMap((r, k) =>
			r.type === 'min_award' || r.type === 'supplier_count' || r.type === 'award_fixed_cost' ? [k] : []
		)
	);
}

/** A supplier shut out of a lot or the event: a group indicator held at 0. */
interface Shut {
	supplier: string;
	group: string;
}

/**
 * The LP the links are priced with: the model without the integer-only rules, several times smaller
 * than the whole one (at 10,000 x 50 with the event rules the whole LP, 4.5 million entries, is more
 * than HiGHS's 2 GB WebAssembly heap holds), its answer read into the whole model's columns and rows.
 */
function relaxationOf(problem: AwardProblem, full: AwardModel) {
	const integerOnly = integerOnlyRules(problem);
	const reduced = integerOnly.size ? buildModel(problem, { withoutRules: integerOnly }) : full;
	// Columns both models have: bid tiers, bundles and spend totals (these in the order they were made).
	const columnKeys = (model: AwardModel) => {
		let totals = 0;
		return model.columns.map((c) =>
			c.kind === 'tier' || c.kind === 'tier_used'
				? `${c.kind}|${c.bid}|${c.tier}`
				: c.kind === 'bundle'
					? `bundle|${c.bundle}`
					: c.kind === 'spend_total'
						? `total|${totals++}`
						: null
		);
	};
	const fullColumn = new Map<string, number>();
	columnKeys(full).forEach((key, j) => key && fullColumn.set(key, j));
	const columnMap = columnKeys(reduced).map((key) => (key ? (fullColumn.get(key) ?? -1) : -1));
	// Rows that can link items: covers, capacities, each rule's rows in the order it made them, and the
	// row that defines each spend total (Σ spend over G − T[G] = 0: its dual prices every bid of G).
	const rowKeys = (model: AwardModel) => {
		const seen = new Map<number, number>();
		const keys: (string | null)[] = model.rows.map((m) => {
			if (m.kind === 'cover') return `cover|${m.item}`;
			if (m.kind === 'capacity') return `capacity|${m.supplier}`;
			if (m.kind !== 'rule') return null;
			const n = seen.get(m.rule) ?? 0;
			seen.set(m.rule, n + 1);
			return `rule|${m.rule}|${n}`;
		});
		let totals = 0;
		model.columns.forEach((c, j) => {
			if (c.kind !== 'spend_total') return;
			const n = totals++;
			for (let k = model.starts[j]!; k < model.starts[j + 1]!; k++) {
				const r = model.indices[k]!;
				if (model.rows[r]!.kind === 'structure' && model.rowLower[r] === model.rowUpper[r])
					keys[r] = `total|${n}`;
			}
		});
		return keys;
	};
	const fullRow = new Map<string, number>();
	rowKeys(full).forEach((key, r) => key && fullRow.set(key, r));
	const rowMap = rowKeys(reduced).map((key) => (key ? (fullRow.get(key) ?? -1) : -1));
	const lotOf = new Map(problem.items.map((i) => [i.ref, i.lot]));
	const inGroup = (item: string, group: string) =>
		group === 'event' || (group.startsWith('lot:') && lotOf.get(item) === group.slice(4));
	const offerOf = (c: ColumnMeaning): [string, string[]] | null => {
		if (c.kind === 'tier') {
			const bid = problem.bids[c.bid]!;
			return [bid.supplier, [bid.item]];
		}
		if (c.kind === 'bundle') {
			const bundle = problem.bundles[c.bundle]!;
			return [bundle.supplier, bundle.items.map((l) => l.item)];
		}
		return null;
	};
	return async (shut: readonly Shut[], solver: Solver, clock: Clock): Promise<Priced | SolveStatus> => {
		let model = reduced;
		if (shut.length) {
			const colUpper = Float64Array.from(reduced.colUpper);
			reduced.columns.forEach((c, k) => {
				const offer = offerOf(c);
				if (!offer) return;
				const [supplier, items] = offer;
				if (shut.some((x) => x.supplier === supplier && items.some((i) => inGroup(i, x.group))))
					colUpper[k] = 0;
			});
			model = { ...reduced, colUpper };
		}
		const outcome = await solver.solve(model, { timeLimit: Math.max(1, clock.left()), relax: true });
		if (outcome.status !== 'optimal') return outcome.status;
		if (!outcome.columns || !outcome.rowDuals) return 'solver_error';
		const x = new Float64Array(full.numCols);
		columnMap.forEach((j, k) => {
			if (j >= 0) x[j] = outcome.columns![k]!;
		});
		const duals = new Float64Array(full.numRows);
		rowMap.forEach((r, k) => {
			if (r >= 0) duals[r] = outcome.rowDuals![k]!;
		});
		return { x, duals, objective: outcome.objective! };
	};
}

type Relaxation = ReturnType<typeof relaxationOf>;

/**
 * Multipliers for the rows "s wins part of i ⇒ s wins part of G" (y[s,i] <= v[s,G]) where v carries a
 * fixed cost f, which the LP without the integer-only rules leaves unpriced: f shared over the items in
 * proportion to the quantity that LP gave s in each. An item then pays its share of f whenever it uses s,
 * and a supplier's fixed cost is covered by the items that use it (the classic Lagrangian of the fixed
 * charge; any multipliers ≥ 0 keep the bound valid). Without them the bound ignores fixed costs.
 */
function withFixedCostShares(problem: AwardProblem, model: AwardModel, blocks: Blocks, lp: Priced): Priced {
	const quantity = new Map<string, number>();
	const add = (key: string, q: number) => quantity.set(key, (quantity.get(key) ?? 0) + q);
	model.columns.forEach((c, j) => {
		if (c.kind !== 'tier' || !(lp.x[j]! > 0)) return;
		const bid = problem.bids[c.bid]!;
		const q = lp.x[j]! * (c.step ?? 1);
		add(`${bid.supplier}\u0000${bid.item}`, q);
		add(bid.supplier, q);
	});
	const duals = Float64Array.from(lp.duals);
	let changed = false;
	for (let r = 0; r < model.numRows; r++) {
		if (blocks.rowBlock[r] !== LINKING || lp.duals[r] !== 0) continue;
		if (blocks.rowStarts[r + 1]! - blocks.rowStarts[r]! !== 2) continue;
		let win = -1;
		let group = -1;
		for (let k = blocks.rowStarts[r]!; k < blocks.rowStarts[r + 1]!; k++) {
			const j = blocks.rowColumns[k]!;
			const a = blocks.rowValues[k]!;
			const meaning = model.columns[j]!;
			if (meaning.kind === 'wins' && a === 1) win = j;
			if (meaning.kind === 'wins_group' && a === -1) group = j;
		}
		if (win < 0 || group < 0 || !(model.colCost[group]! > 0)) continue;
		const y = model.columns[win] as { supplier: string; item: string };
		const total = quantity.get(y.supplier) ?? 0;
		const share = total > 0 ? (quantity.get(`${y.supplier}\u0000${y.item}`) ?? 0) / total : 0;
		if (share <= 0) continue;
		// An upper-bounded row's dual is ≤ 0 (the engine's sign: d objective / d bound).
		duals[r] = -model.colCost[group]! * share;
		changed = true;
	}
	return changed ? { ...lp, duals } : lp;
}

interface Choice {
	open: Set<number>;
	model: AwardModel;
	lp: Priced;
	/** The LP under this choice, with the fixed cost of each open supplier counted in full. */
	value: number;
}

/** Most LP solves the supplier search makes, and the share of the time limit it may take. */
const SEARCH_SOLVES = 8;
const SEARCH_SHARE = 0.25;

/**
 * The suppliers that may win in each lot and over the event (the group indicators that count in a
 * supplier count or carry a fixed cost): first the global block's answer at the Lagrangian prices,
 * then a local search guided by the LP (shut the open supplier the LP relies on least where it carries
 * a fixed cost; swap it for the shut one the first LP relied on most where a count caps them), each
 * choice priced by its LP, the fixed costs of open suppliers in full.
 */
async function chooseSuppliers(
	problem: AwardProblem,
	model: AwardModel,
	blocks: Blocks,
	lp: Priced,
	global: Float64Array,
	relaxation: Relaxation,
	solver: Solver,
	clock: Clock
): Promise<Choice | null> {
	const counted = countedGroupColumns(model, blocks);
	const shuttable = blocks.globalColumns.filter(
		(j) => model.integrality[j] && (model.colCost[j]! > 0 || counted.has(j))
	);
	if (!shuttable.length) return null;
	const firstUse = groupSpend(problem, model, lp.x);
	const keepsCounts = (open: ReadonlySet<number>) => {
		for (let r = 0; r < model.numRows; r++) {
			if (blocks.rowBlock[r] !== GLOBAL) continue;
			let sum = 0;
			for (let k = blocks.rowStarts[r]!; k < blocks.rowStarts[r + 1]!; k++)
				if (open.has(blocks.rowColumns[k]!)) sum += blocks.rowValues[k]!;
			if (sum > model.rowUpper[r]! + 1e-9) return false;
		}
		return true;
	};
	const evaluate = async (open: Set<number>): Promise<Choice | null> => {
		const shut = shuttable.flatMap((j): Shut[] => {
			const meaning = model.columns[j]!;
			return open.has(j) || meaning.kind !== 'wins_group'
				? []
				: [{ supplier: meaning.supplier, group: meaning.group }];
		});
		// Nobody shut: the first LP already is this choice's.
		const priced = shut.length ? await relaxation(shut, solver, clock) : lp;
		if (typeof priced === 'string') return null;
		let value = priced.objective;
		for (const j of open) value += model.colCost[j]!;
		return { open, model: withOpen(model, shuttable, open), lp: priced, value };
	};
	// Two starts: the global block's answer at the prices, and the most suppliers the counts allow,
	// those the LP used most first (the prices can shut every supplier a fixed cost is charged on when
	// the LP they come from has no group indicators).
	const mostUsed = await solver.solve(
		subModel(model, blocks, shuttable, lp.x, {
			costs: Float64Array.from(firstUse, (use) => -(use + 1e-6)),
			skipRow: (r) => blocks.rowBlock[r] !== GLOBAL
		}).model,
		{ timeLimit: Math.max(1, clock.left()) }
	);
	const starts = [new Set(shuttable.filter((j) => global[j]! > 0.5))];
	if (mostUsed.columns) starts.push(new Set(shuttable.filter((_, p) => mostUsed.columns![p]! > 0.5)));
	const keyOf = (open: ReadonlySet<number>) => [...open].sort((a, b) => a - b).join(',');
	const tried = new Set<string>();
	let best: Choice | null = null;
	for (const open of starts) {
		if (tried.has(keyOf(open))) continue;
		tried.add(keyOf(open));
		const choice = await evaluate(open);
		if (choice && (!best || choice.value < best.value)) best = choice;
	}
	if (!best) return null;
	// No choice prices below the first LP when no open supplier costs anything: then this one is best.
	const free = shuttable.every((j) => model.colCost[j]! <= 0);
	if (free && best.value <= lp.objective + 1e-9 * Math.abs(lp.objective)) return best;
	const deadline = clock.elapsed() + SEARCH_SHARE * (clock.elapsed() + clock.left());
	for (let solves = 1; solves < SEARCH_SOLVES && clock.elapsed() < deadline;) {
		const use = groupSpend(problem, model, best.lp.x);
		const openList = [...best.open].sort((a, b) => use[a]! - use[b]!);
		const moves: Set<number>[] = [];
		for (const j of openList.slice(0, 3)) {
			if (model.colCost[j]! > 0) moves.push(new Set([...best.open].filter((k) => k !== j)));
			if (!counted.has(j)) continue;
			const meaning = model.columns[j]!;
			const group = meaning.kind === 'wins_group' ? meaning.group : '';
			const entering = shuttable
				.filter((k) => !best!.open.has(k) && counted.has(k))
				.filter((k) => {
					const m = model.columns[k]!;
					return m.kind === 'wins_group' && m.group === group;
				})
				.sort((a, b) => firstUse[b]! - firstUse[a]!)[0];
			if (entering !== undefined) moves.push(new Set([...best.open].filter((k) => k !== j).concat(entering)));
		}
		let improved = false;
		for (const open of moves) {
			const key = keyOf(open);
			if (tried.has(key) || !keepsCounts(open)) continue;
			tried.add(key);
			if (solves++ >= SEARCH_SOLVES || clock.elapsed() >= deadline) break;
			const choice = await evaluate(open);
			if (choice && choice.value < best.value - 1e-9 * Math.abs(best.value)) {
				best = choice;
				improved = true;
				break;
			}
		}
		if (!improved) break;
	}
	return best;
}

interface Repair {
	columns: Float64Array | null;
	/** Largest relative excess of a row at the end (0 when the award keeps every row). */
	excess: number;
}

/**
 * Relax-and-fix over the blocks the LP did not settle: each takes its own MIP's answer when that keeps
 * the rows it shares, else is solved again with the rest held.
 */
async function repair(
	model: AwardModel,
	blocks: Blocks,
	solves: BlockSolves,
	solver: Solver,
	clock: Clock,
	options: SolveOptions
): Promise<Repair> {
	// Every block at its LP split rounded up (the settled ones for good, the others until their turn);
	// the group indicators left free by the supplier choice open (a chosen supplier may win), until the
	// last step sets them.
	const current = Float64Array.from(solves.rounded);
	for (const j of blocks.globalColumns)
		if (model.integrality[j] && model.colLower[j] !== model.colUpper[j]) current[j] = model.colUpper[j]!;
	const activity = rowActivities(model, blocks, current);
	const maxCost = model.colCost.reduce((a, c) => Math.max(a, Math.abs(c)), 1);
	const penalty = 1e3 * maxCost;
	const linking = (r: number) => blocks.rowBlock[r] === LINKING;
	const gap = options.gap ?? 1e-6;
	// Continuous columns of no item (spend totals) move with every batch. One defined by an equality
	// row (T[G] = Σ spend over G) follows a candidate's change of that row, so a candidate is judged
	// with the total it implies.
	const floating = blocks.globalColumns.filter(
		(j) => !model.integrality[j] && model.colLower[j] !== model.colUpper[j]
	);
	const definedBy = new Map<number, { row: number; coefficient: number }>();
	for (const j of floating)
		for (let k = model.starts[j]!; k < model.starts[j + 1]!; k++) {
			const r = model.indices[k]!;
			if (model.rowLower[r] === model.rowUpper[r] && !definedBy.has(j))
				definedBy.set(j, { row: r, coefficient: model.values[k]! });
		}
	/** The column changes a candidate makes, with the defined columns that follow them. */
	const changes = (columns: readonly number[], values: (j: number) => number) => {
		const moves = new Map<number, number>();
		const rows = new Map<number, number>();
		const move = (j: number, delta: number) => {
			moves.set(j, (moves.get(j) ?? 0) + delta);
			for (let k = model.starts[j]!; k < model.starts[j + 1]!; k++) {
				const r = model.indices[k]!;
				rows.set(r, (rows.get(r) ?? 0) + model.values[k]! * delta);
			}
		};
		for (const j of columns) {
			const delta = values(j) - current[j]!;
			if (delta !== 0) move(j, delta);
		}
		for (const [j, { row, coefficient }] of definedBy) {
			const d = rows.get(row);
			if (d && !moves.has(j)) move(j, -d / coefficient);
		}
		return { moves, rows };
	};
	const apply = (columns: readonly number[], values: (j: number) => number) => {
		const { moves, rows } = changes(columns, values);
		for (const [j, delta] of moves) current[j]! += delta;
		for (const [r, d] of rows) activity[r]! += d;
	};
	const keeps = (columns: readonly number[], values: (j: number) => number) => {
		const { moves, rows } = changes(columns, values);
		for (const [j, delta] of moves) {
			const value = current[j]! + delta;
			if (value < model.colLower[j]! - 1e-9 || value > model.colUpper[j]! + 1e-9) return false;
		}
		for (const [r, d] of rows) if (rowExcess(model, r, activity[r]! + d) > KEPT) return false;
		return true;
	};
	const resolve = async (batch: number[]) => {
		const columns = [...new Set([...batch, ...floating])];
		const cut = subModel(model, blocks, columns, current, { elasticRow: linking, penalty });
		const outcome = await solver.solve(cut.model, { timeLimit: Math.max(1, clock.left()), gap });
		if (!outcome.columns) return false;
		const value = new Map<number, number>();
		cut.columns.forEach((j, p) => j >= 0 && value.set(j, outcome.columns![p]!));
		apply(columns, (j) => value.get(j)!);
		return true;
	};
	const broken = blocks.columnsOf.flatMap((_, b) => (solves.whole[b] ? [] : [b]));
	for (let k = 0; k < broken.length; k += BATCH_ITEMS) {
		if (clock.left() <= 0) return { columns: null, excess: Infinity };
		const batch = broken.slice(k, k + BATCH_ITEMS);
		const columns = batch.flatMap((b) => blocks.columnsOf[b]!);
		const fromOwn = (j: number) => solves.candidate[j]!;
		if (batch.every((b) => solves.solved.has(b)) && keeps(columns, fromOwn)) {
			apply(columns, fromOwn);
		} else if (!(await resolve(columns))) return { columns: null, excess: Infinity };
	}
	// Rows still broken: the blocks on them once more, each with the rest held.
	const excessOf = () => activity.reduce((a, value, r) => Math.max(a, rowExcess(model, r, value)), 0);
	for (let pass = 0; pass < 2 && excessOf() > KEPT; pass++) {
		const touched = new Set<number>();
		for (let r = 0; r < model.numRows; r++) {
			if (blocks.rowBlock[r] === GLOBAL || rowExcess(model, r, activity[r]!) <= KEPT) continue;
			for (let k = blocks.rowStarts[r]!; k < blocks.rowStarts[r + 1]!; k++) {
				const b = blocks.blockOf[blocks.rowColumns[k]!]!;
				if (b >= 0) touched.add(b);
			}
		}
		const list = [...touched];
		for (let k = 0; k < list.length; k += BATCH_ITEMS) {
			if (clock.left() <= 0) break;
			await resolve(list.slice(k, k + BATCH_ITEMS).flatMap((b) => blocks.columnsOf[b]!));
		}
	}
	// The group indicators last, with every item held: counts and fixed costs at least cost.
	const choices = blocks.globalColumns.filter((j) => model.colLower[j] !== model.colUpper[j]);
	if (choices.length) await resolve(choices);
	for (let j = 0; j < model.numCols; j++) if (model.integrality[j]) current[j] = Math.round(current[j]!);
	const final = rowActivities(model, blocks, current);
	const excess = final.reduce((a, value, r) => Math.max(a, rowExcess(model, r, value)), 0);
	return { columns: current, excess };
}

export async function solveLinked(
	problem: AwardProblem,
	solver: Solver,
	options: SolveOptions,
	clock: Clock,
	progress?: (update: Progress) => void,
	/** Spend the time left after the award on a stronger bound; off when a full MIP follows. */
	strengthen = true,
	/** Also the bound that keeps each supplier whole (supplier-bound.ts); off only to compare without it. */
	wholeSuppliers = true
): Promise<LinkedOutcome> {
	const model = buildModel(problem);
	const began = clock.elapsed();
	const base = {
		method: 'lagrangian' as const,
		uncovered: model.uncovered,
		modelSize: modelSize(model)
	};
	const none = (status: Solved['status'], bound: number | null = null): LinkedOutcome => ({
		...base,
		status,
		objective: null,
		bound,
		gap: null,
		lines: [],
		seconds: clock.elapsed() - began,
		columns: null
	});
	const blocks = blocksOf(problem, model);
	const relaxation = relaxationOf(problem, model);
	const first = await relaxation([], solver, clock);
	if (typeof first === 'string') return none(first === 'optimal' ? 'solver_error' : first);
	let pricing = withFixedCostShares(problem, model, blocks, first);
	const solves = await solveBlocks(problem, model, blocks, pricing, solver, clock, options);
	let pricingSolves = solves;
	let bound = Math.max(first.objective, solves.bound);
	progress?.({ seconds: clock.elapsed(), objective: null, bound });
	// The award: the suppliers chosen for each lot and the event, then the blocks again under that choice.
	let restricted = model;
	let restrictedBlocks = blocks;
	let restrictedSolves = solves;
	if (solves.global) {
		const choice = await chooseSuppliers(
			problem,
			model,
			blocks,
			first,
			solves.global,
			relaxation,
			solver,
			clock
		);
		// Nobody shut out: the blocks as priced already.
		if (choice && choice.lp !== first) {
			restricted = choice.model;
			restrictedBlocks = blocksOf(problem, choice.model);
			restrictedSolves = await solveBlocks(
				problem,
				choice.model,
				restrictedBlocks,
				choice.lp,
				solver,
				clock,
				options
			);
		}
	}
	const fixed = await repair(restricted, restrictedBlocks, restrictedSolves, solver, clock, options);
	const wanted = options.gap ?? 1e-6;
	// The bound that keeps each supplier whole (supplier-bound.ts): it sees the event's supplier count
	// and fixed costs per supplier, which the bound over item blocks sees only through their LP. Not
	// when a full MIP follows: that MIP's bound is the stronger one there, and it gets the time. Its
	// steps aim at the award's cost, or without an award a little above the bound so far.
	const wholeSupplierBound = (target: number) =>
		strengthen && wholeSuppliers
			? supplierBound(problem, model, first.duals, target, {
					seconds: Math.min(SUPPLIER_BOUND_SECONDS, SUPPLIER_BOUND_SHARE * clock.left()),
					gap: wanted
				})
			: null;
	if (!fixed.columns || fixed.excess > FINAL) {
		const whole = await wholeSupplierBound((1 + NO_AWARD_TARGET_MARGIN) * Math.abs(bound));
		return none('no_solution_in_time', Math.max(bound, whole?.bound ?? -Infinity));
	}
	const columns = fixed.columns;
	const objective = model.colCost.reduce((a, c, j) => a + c * columns[j]!, 0);
	const gapOf = (b: number) => Math.max(0, objective - b) / Math.max(1e-9, Math.abs(objective));
	progress?.({ seconds: clock.elapsed(), objective, bound: Math.min(bound, objective) });
	if (gapOf(bound) > wanted) {
		const whole = await wholeSupplierBound(objective);
		if (whole && whole.bound > bound) {
			bound = whole.bound;
			progress?.({ seconds: clock.elapsed(), objective, bound: Math.min(bound, objective) });
		}
	}
	// With the award in hand, the time left goes to a stronger bound where the whole LP fits: that LP
	// (with the minimum awards and supplier counts in it), and the Lagrangian bound at its duals.
	if (strengthen && gapOf(bound) > wanted && clock.left() > 1 && model.indices.length <= WHOLE_LP_ENTRIES) {
		const full = await solver.solve(model, { timeLimit: clock.left(), relax: true });
		if (full.status === 'optimal' && full.columns && full.rowDuals) {
			const priced = { x: full.columns, duals: full.rowDuals, objective: full.objective! };
			bound = Math.max(bound, priced.objective);
			if (clock.left() > 0) {
				const again = await solveBlocks(problem, model, blocks, priced, solver, clock, options);
				if (again.bound > bound) {
					bound = again.bound;
					pricing = priced;
					pricingSolves = again;
				}
			}
			progress?.({ seconds: clock.elapsed(), objective, bound: Math.min(bound, objective) });
		}
	}
	// Then subgradient steps on the multipliers while time is left.
	if (strengthen)
		bound = await improveBound(
			problem,
			model,
			blocks,
			pricing,
			pricingSolves,
			objective,
			bound,
			solver,
			clock,
			options,
			(b) => progress?.({ seconds: clock.elapsed(), objective, bound: Math.min(b, objective) })
		);
	const gap = gapOf(bound);
	return {
		...base,
		status: gap <= wanted ? 'optimal' : 'feasible',
		objective,
		bound: Math.min(bound, objective),
		gap,
		lines: awardLines(problem, model, columns, true),
		seconds: clock.elapsed() - began,
		columns
	};
}

/** The supplier bound's time: at most these seconds, and this share of the time left. */
const SUPPLIER_BOUND_SECONDS = 20;
const SUPPLIER_BOUND_SHARE = 0.5;
/** Without an award, its steps aim this far above the bound so far. */
const NO_AWARD_TARGET_MARGIN = 0.05;

/** Most subgradient steps after the award, and the step factor below which they stop. */
const SUBGRADIENT_STEPS = 200;
const SMALLEST_STEP = 1 / 64;

/**
 * Subgradient ascent on the Lagrangian bound (Polyak steps; Held, Wolfe and Crowder 1974, Mathematical
 * Programming 6): from the multipliers of the best bound so far, each step moves every linking row's
 * multiplier by how far the blocks' own answers break or slacken it, scaled to the distance from the
 * award's cost; every block is then solved again (at such multipliers no block's LP split is known to be
 * its answer). A step counts only when every block was solved in time. Stops at the time limit, at the
 * requested gap, after SUBGRADIENT_STEPS, or when the step factor has halved below SMALLEST_STEP.
 */
async function improveBound(
	problem: AwardProblem,
	model: AwardModel,
	blocks: Blocks,
	start: Priced,
	startSolves: BlockSolves,
	objective: number,
	bound: number,
	solver: Solver,
	clock: Clock,
	options: SolveOptions,
	report: (bound: number) => void
): Promise<number> {
	const wanted = options.gap ?? 1e-6;
	const gapOf = (b: number) => (objective - b) / Math.max(1e-9, Math.abs(objective));
	let duals = Float64Array.from(start.duals);
	let last = startSolves;
	let lastBound = startSolves.bound;
	let factor = 1;
	let stalled = 0;
	let passSeconds = 0;
	for (let step = 0; step < SUBGRADIENT_STEPS; step++) {
		// A step solves every block: none is started that the last one says will not fit in the time left.
		if (gapOf(bound) <= wanted || clock.left() < Math.max(1, passSeconds) || factor < SMALLEST_STEP) break;
		const activity = rowActivities(model, blocks, last.candidate);
		const direction = new Float64Array(model.numRows);
		const scale = new Float64Array(model.numRows);
		let norm = 0;
		for (let r = 0; r < model.numRows; r++) {
			if (blocks.rowBlock[r] !== LINKING) continue;
			const a = activity[r]!;
			const lower = model.rowLower[r]!;
			const upper = model.rowUpper[r]!;
			// The dual as priced: pointing at a finite bound only.
			const y = !Number.isFinite(lower)
				? Math.min(0, duals[r]!)
				: !Number.isFinite(upper)
					? Math.max(0, duals[r]!)
					: duals[r]!;
			// ∂L/∂y: the bound the dual points at minus the row; at 0, towards the bound the row breaks.
			const g = y > 0 ? lower - a : y < 0 ? upper - a : a < lower ? lower - a : a > upper ? upper - a : 0;
			// Rows differ in scale (units, money, yes/no): each is measured relative to its size.
			const size = Math.max(
				1,
				Math.abs(a),
				Number.isFinite(lower) ? Math.abs(lower) : 0,
				Number.isFinite(upper) ? Math.abs(upper) : 0
			);
			scale[r] = size;
			direction[r] = g / size;
			norm += (g / size) ** 2;
		}
		if (norm === 0) break;
		const size = (factor * Math.max(0, objective - lastBound)) / norm;
		if (!(size > 0)) break;
		const next = Float64Array.from(duals);
		for (let r = 0; r < model.numRows; r++) {
			if (direction[r] === 0) continue;
			let y = duals[r]! + (size * direction[r]!) / scale[r]!;
			if (!Number.isFinite(model.rowLower[r]!)) y = Math.min(0, y);
			if (!Number.isFinite(model.rowUpper[r]!)) y = Math.max(0, y);
			next[r] = y;
		}
		const began = clock.elapsed();
		const pass = await solveBlocks(
			problem,
			model,
			blocks,
			{ ...start, duals: next },
			solver,
			clock,
			options,
			'all'
		);
		passSeconds = clock.elapsed() - began;
		if (!pass.complete) break;
		duals = next;
		last = pass;
		lastBound = pass.bound;
		if (pass.bound > bound + 1e-9 * Math.abs(bound)) {
			bound = pass.bound;
			report(bound);
			stalled = 0;
		} else if (++stalled >= 2) {
			factor /= 2;
			stalled = 0;
		}
	}
	return bound;
}
