// Seeded random award problems using every rule kind, price breaks and bundles, solved by the engine
// (HiGHS) and by glpk.js through a formulation written separately here, row by row with named
// variables. Both must reach the same optimum; the engine's allocation must pass the independent checker.
import GLPK, { type LP } from 'glpk.js/node';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { solveAward } from './engine';
import {
	benchmarkRules,
	crossCheckCases,
	fixedCostBenchmarkRule,
	generateProblem,
	linkedCases,
	wholeUnitCases
} from '../tools/generate';
import { buildModel } from './model';
import { startClock } from './methods/clock';
import { solveLinked } from './methods/linked';
import { supplierBound } from './methods/supplier-bound';
import { SolverPool } from '../runtime/pool';
import type { AwardProblem, AwardRule } from './problem';

type Glpk = Awaited<ReturnType<typeof GLPK>>;
let glpk: Glpk;
const pool = new SolverPool({ size: 2 });
beforeAll(async () => {
	glpk = await GLPK();
});
afterAll(() => pool.close());

// Whole units and packs, from the definitions in docs/award-engine.md (not units.ts): an item in C62 (UN/CEFACT
// Recommendation 20 "one", the only counting code the cases use) is awarded in whole units; a bid moves in
// the least common multiple of the item's order multiple and its pack size (whole numbers in the cases);
// where bids move in steps the cover may exceed the demand by less than the item's largest step.
const gcd = (a: number, b: number): number => (b ? gcd(b, a % b) : a);
function stepOfBid(item: AwardProblem['items'][number], bid: AwardProblem['bids'][number]): number {
	const sizes = [item.orderMultiple, bid.packSize].filter((v): v is number => v !== undefined);
	if (sizes.length) return sizes.reduce((a, b) => (a * b) / gcd(a, b));
	return item.unit === 'C62' ? 1 : 0;
}

/** The award problem in glpk.js's own terms; shares the engine's definitions, none of its code. */
function glpkFormulation(problem: AwardProblem, g: Glpk): LP {
	const rows: LP['subjectTo'] = [];
	const objective: { name: string; coef: number }[] = [];
	const bounds: NonNullable<LP['bounds']> = [];
	const binaries: string[] = [];
	const generals: string[] = [];
	const itemOf = new Map(problem.items.map((i) => [i.ref, i]));
	const largestStep = new Map<string, number>();
	for (const bid of problem.bids)
		largestStep.set(
			bid.item,
			Math.max(largestStep.get(bid.item) ?? 0, stepOfBid(itemOf.get(bid.item)!, bid))
		);
	const most = new Map(
		problem.items.map((i) => {
			const step = largestStep.get(i.ref) ?? 0;
			return [i.ref, step ? i.quantity + step - (i.unit === 'C62' ? 1 : 0) : i.quantity];
		})
	);
	const up = (ub: number) => ({ type: g.GLP_UP, ub, lb: 0 });
	const lo = (lb: number) => ({ type: g.GLP_LO, ub: 0, lb });
	const fx = (v: number) => ({ type: g.GLP_FX, ub: v, lb: v });
	const demand = new Map(problem.items.map((i) => [i.ref, i.quantity]));
	const qty = new Map<string, { name: string; coef: number }[]>(); // "s|i" -> quantity terms
	const cost = new Map<string, { name: string; coef: number }[]>(); // "s|i" -> spend terms
	const push = (
		m: Map<string, { name: string; coef: number }[]>,
		k: string,
		t: { name: string; coef: number }
	) => m.set(k, [...(m.get(k) ?? []), t]);
	const cap = new Map(problem.suppliers.map((s) => [s.ref, s.capacity ?? Infinity]));
	let n = 0;
	problem.bids.forEach((bid) => {
		const k = `${bid.supplier}|${bid.item}`;
		const limit = Math.min(bid.maxQuantity ?? Infinity, most.get(bid.item)!, cap.get(bid.supplier)!);
		const unitStep = stepOfBid(itemOf.get(bid.item)!, bid);
		const steps = [
			{ from: 0, price: bid.unitPrice },
			...(bid.priceBreaks ?? []).map((p) => ({ from: p.fromQuantity, price: p.unitPrice }))
		].filter((s) => s.from <= limit);
		const choose: { name: string; coef: number }[] = [];
		steps.forEach((step, t) => {
			const x = `q${n++}`;
			const next = steps[t + 1]?.from;
			// In steps, x counts steps of `per` units, and a tier ends at the last whole step below the next break.
			const per = unitStep || 1;
			const hi = unitStep
				? per * Math.min(next === undefined ? Infinity : Math.ceil(next / per) - 1, Math.floor(limit / per))
				: Math.min(next ?? Infinity, limit);
			if (unitStep) generals.push(x);
			objective.push({ name: x, coef: step.price * per });
			push(qty, k, { name: x, coef: per });
			push(cost, k, { name: x, coef: step.price * per });
			if (steps.length === 1) {
				bounds.push({ name: x, type: g.GLP_DB, lb: 0, ub: hi / per });
				return;
			}
			const on = `on${n++}`;
			binaries.push(on);
			choose.push({ name: on, coef: 1 });
			rows.push({
				name: `r${n++}`,
				vars: [
					{ name: x, coef: per },
					{ name: on, coef: -step.from }
				],
				bnds: lo(0)
			});
			rows.push({
				name: `r${n++}`,
				vars: [
					{ name: x, coef: per },
					{ name: on, coef: -hi }
				],
				bnds: up(0)
			});
		});
		if (choose.length) rows.push({ name: `r${n++}`, vars: choose, bnds: up(1) });
	});
	problem.bundles.forEach((bundle) => {
		const w = `b${n++}`;
		binaries.push(w);
		objective.push({ name: w, coef: bundle.price });
		const weight = bundle.items.map(
			(l) => l.quantity * (problem.items.find((i) => i.ref === l.item)!.baselineUnitPrice ?? 1)
		);
		const total = weight.reduce((a, b) => a + b, 0);
		bundle.items.forEach((line, j) => {
			push(qty, `${bundle.supplier}|${line.item}`, { name: w, coef: line.quantity });
			push(cost, `${bundle.supplier}|${line.item}`, { name: w, coef: (bundle.price * weight[j]!) / total });
		});
	});
	const items = problem.items
		.map((i) => i.ref)
		.filter((i) => [...qty.keys()].some((k) => k.endsWith(`|${i}`)));
	const sups = problem.suppliers.map((s) => s.ref);
	const merge = (terms: { name: string; coef: number }[]) => {
		const m = new Map<string, number>();
		for (const t of terms) m.set(t.name, (m.get(t.name) ?? 0) + t.coef);
		return [...m].map(([name, coef]) => ({ name, coef }));
	};
	const q = (ss: string[], is: string[]) =>
		merge(ss.flatMap((s) => is.flatMap((i) => qty.get(`${s}|${i}`) ?? [])));
	const spend = (ss: string[], is: string[], f = 1) =>
		merge(ss.flatMap((s) => is.flatMap((i) => cost.get(`${s}|${i}`) ?? []))).map((t) => ({
			...t,
			coef: t.coef * f
		}));
	for (const i of items)
		rows.push({
			name: `cover_${n++}`,
			vars: q(sups, [i]),
			bnds:
				most.get(i)! > demand.get(i)!
					? { type: g.GLP_DB, lb: demand.get(i)!, ub: most.get(i)! }
					: fx(demand.get(i)!)
		});
	for (const s of problem.suppliers)
		if (s.capacity !== undefined && q([s.ref], items).length)
			rows.push({ name: `cap${n++}`, vars: q([s.ref], items), bnds: up(s.capacity) });

	const needsWins = problem.rules.some(
		(r) => r.type === 'min_award' || r.type === 'supplier_count' || r.type === 'award_fixed_cost'
	);
	const win = new Map<string, string>();
	if (needsWins) {
		for (const k of qty.keys()) {
			const [s, i] = k.split('|') as [string, string];
			if (!items.includes(i)) continue;
			const y = `y${n++}`;
			binaries.push(y);
			win.set(k, y);
			const ceiling = Math.min(
				most.get(i)!,
				(problem.bids.find((b) => b.supplier === s && b.item === i)
					? Math.min(
							problem.bids.find((b) => b.supplier === s && b.item === i)!.maxQuantity ?? Infinity,
							most.get(i)!,
							cap.get(s)!
						)
					: 0) +
					problem.bundles
						.filter((b) => b.supplier === s)
						.flatMap((b) => b.items)
						.filter((l) => l.item === i)
						.reduce((a, l) => a + l.quantity, 0)
			);
			rows.push({ name: `w${n++}`, vars: [...q([s], [i]), { name: y, coef: -ceiling }], bnds: up(0) });
			rows.push({
				name: `w${n++}`,
				vars: [...q([s], [i]), { name: y, coef: -Math.min(1, ceiling) }],
				bnds: lo(0)
			});
		}
	}
	const groupsOf = (
		scope: AwardRule extends infer R ? (R extends { scope: infer S } ? S : never) : never
	): string[][] => {
		if (scope === 'each_item') return items.map((i) => [i]);
		if (scope === 'event') return [items];
		if ('item' in scope) return items.includes(scope.item) ? [[scope.item]] : [];
		return [items.filter((i) => problem.items.find((x) => x.ref === i)!.lot === scope.lot)];
	};
	const whoOf = (who: 'each_supplier' | { supplier: string } | { tag: string }): string[][] =>
		who === 'each_supplier'
			? sups.map((s) => [s])
			: 'supplier' in who
				? [[who.supplier]]
				: [problem.suppliers.filter((s) => s.tags?.includes(who.tag)).map((s) => s.ref)];
	const anyWin = new Map<string, string>();
	const groupWin = (s: string, key: string, is: string[]) => {
		const k = `${s}#${key}`;
		if (anyWin.has(k)) return anyWin.get(k)!;
		const ys = is.map((i) => win.get(`${s}|${i}`)).filter((y): y is string => Boolean(y));
		if (!ys.length) return null;
		const v = `v${n++}`;
		binaries.push(v);
		anyWin.set(k, v);
		for (const y of ys)
			rows.push({
				name: `g${n++}`,
				vars: [
					{ name: y, coef: 1 },
					{ name: v, coef: -1 }
				],
				bnds: up(0)
			});
		rows.push({
			name: `g${n++}`,
			vars: [{ name: v, coef: 1 }, ...ys.map((y) => ({ name: y, coef: -1 }))],
			bnds: up(0)
		});
		return v;
	};
	for (const rule of problem.rules) {
		if (rule.type === 'max_share' || rule.type === 'min_share') {
			const perItem = rule.scope === 'each_item' || (typeof rule.scope === 'object' && 'item' in rule.scope);
			const basis = rule.basis ?? (perItem ? 'quantity' : 'spend');
			for (const is of groupsOf(rule.scope))
				for (const ss of whoOf(rule.who)) {
					if (!is.length || !ss.length) continue;
					const p = rule.percent / 100;
					const vars = basis === 'quantity' ? q(ss, is) : merge([...spend(ss, is), ...spend(sups, is, -p)]);
					const rhs = basis === 'quantity' ? p * is.reduce((a, i) => a + demand.get(i)!, 0) : 0;
					if (!vars.length) {
						if (rule.type === 'min_share' && rhs > 0)
							rows.push({ name: `bad${n++}`, vars: [{ name: 'never', coef: 1 }], bnds: fx(-1) });
						continue;
					}
					rows.push({ name: `s${n++}`, vars, bnds: rule.type === 'max_share' ? up(rhs) : lo(rhs) });
				}
		}
		if (rule.type === 'min_award')
			for (const is of groupsOf(rule.scope))
				for (const ss of whoOf(rule.who))
					for (const s of ss)
						for (const i of is) {
							const y = win.get(`${s}|${i}`);
							if (!y) continue;
							const m = Math.min(
								demand.get(i)!,
								rule.quantity ?? ((rule.percentOfItem ?? 0) / 100) * demand.get(i)!
							);
							rows.push({ name: `m${n++}`, vars: [...q([s], [i]), { name: y, coef: -m }], bnds: lo(0) });
						}
		if (rule.type === 'supplier_count')
			for (const is of groupsOf(rule.scope)) {
				if (!is.length) continue;
				const single =
					is.length === 1 &&
					(rule.scope === 'each_item' || (typeof rule.scope === 'object' && 'item' in rule.scope));
				const vars = sups
					.map((s) =>
						single ? (win.get(`${s}|${is[0]}`) ?? null) : groupWin(s, JSON.stringify(rule.scope), is)
					)
					.filter((v): v is string => v !== null)
					.map((name) => ({ name, coef: 1 }));
				const lb = rule.min ?? 0;
				const ub = rule.max ?? 1e9;
				rows.push({
					name: `c${n++}`,
					vars: vars.length ? vars : [{ name: 'zero', coef: 1 }],
					bnds: { type: g.GLP_DB, lb, ub }
				});
			}
		if (rule.type === 'max_spend')
			for (const is of groupsOf(rule.scope))
				for (const ss of whoOf(rule.who))
					if (spend(ss, is).length)
						rows.push({ name: `sp${n++}`, vars: spend(ss, is), bnds: up(rule.amount) });
		if (rule.type === 'exclude')
			for (const is of groupsOf(rule.scope))
				for (const ss of whoOf(rule.who))
					if (q(ss, is).length) rows.push({ name: `x${n++}`, vars: q(ss, is), bnds: up(0) });
		if (rule.type === 'award_fixed_cost') {
			if (rule.per === 'supplier_item')
				for (const y of win.values()) objective.push({ name: y, coef: rule.amount });
			else
				for (const s of sups) {
					const v = groupWin(s, '"event"', items);
					if (v) objective.push({ name: v, coef: rule.amount });
				}
		}
	}
	bounds.push(
		{ name: 'zero', type: g.GLP_FX, lb: 0, ub: 0 },
		{ name: 'never', type: g.GLP_FX, lb: 0, ub: 0 }
	);
	return {
		name: 'award',
		objective: { direction: g.GLP_MIN, name: 'cost', vars: merge(objective) },
		subjectTo: rows,
		bounds,
		binaries,
		generals
	};
}

const cases = crossCheckCases();

describe('the engine against glpk.js on seeded random problems', () => {
	it.each(cases)('reaches the same optimum as glpk.js (seed $seed)', async ({ problem }) => {
		const mine = await solveAward(problem, pool, { gap: 1e-9 });
		const theirs = glpk.solve(glpkFormulation(problem, glpk), { msglev: glpk.GLP_MSG_OFF, mipgap: 0 });
		const glpkOptimal = theirs.result.status === glpk.GLP_OPT;
		if (!glpkOptimal) {
			expect(theirs.result.status).toBe(glpk.GLP_NOFEAS);
			expect(mine.status).toBe('infeasible');
			return;
		}
		expect(mine.status).toBe('optimal');
		expect(Math.abs(mine.totalCost! - theirs.result.z) / Math.max(1, Math.abs(theirs.result.z))).toBeLessThan(
			1e-6
		);
		expect(mine.violations).toEqual([]);
	});

	it('covers every rule kind, price breaks and bundles across the cases', () => {
		const kinds = new Set(cases.flatMap((c) => c.problem.rules.map((r) => r.type)));
		expect([...kinds].sort()).toEqual([
			'award_fixed_cost',
			'exclude',
			'max_share',
			'max_spend',
			'min_award',
			'min_share',
			'supplier_count'
		]);
		expect(cases.some((c) => c.problem.bundles.length > 0)).toBe(true);
		expect(cases.some((c) => c.problem.bids.some((b) => b.priceBreaks?.length))).toBe(true);
		expect(cases.some((c) => c.problem.suppliers.some((s) => s.capacity !== undefined))).toBe(true);
	});
});

const wholeCases = wholeUnitCases();

describe('whole units and packs against glpk.js with integer quantities', () => {
	it.each(wholeCases)(
		'reaches the same optimum as glpk.js, in whole steps (seed $seed)',
		async ({ problem }) => {
			const mine = await solveAward(problem, pool, { gap: 1e-9 });
			const theirs = glpk.solve(glpkFormulation(problem, glpk), { msglev: glpk.GLP_MSG_OFF, mipgap: 0 });
			if (theirs.result.status !== glpk.GLP_OPT) {
				expect(theirs.result.status).toBe(glpk.GLP_NOFEAS);
				expect(mine.status).toBe('infeasible');
				return;
			}
			expect(mine.status).toBe('optimal');
			expect(
				Math.abs(mine.totalCost! - theirs.result.z) / Math.max(1, Math.abs(theirs.result.z))
			).toBeLessThan(1e-6);
			expect(mine.violations).toEqual([]);
			const itemOf = new Map(problem.items.map((i) => [i.ref, i]));
			for (const line of mine.awards.filter((l) => !l.bundle)) {
				const bid = problem.bids.find((b) => b.supplier === line.supplier && b.item === line.item)!;
				const step = stepOfBid(itemOf.get(line.item)!, bid);
				// Exactly a whole number of steps, not merely close: this is what reaches a supplier's notice.
				if (step)
					expect(Number.isInteger(line.quantity / step), `${line.item} ${line.quantity} / ${step}`).toBe(
						true
					);
			}
		}
	);

	it('has cases where measured quantities would have split an item into parts', async () => {
		// The same problems with every item measured and no packs: the whole-unit cases above only test
		// something where this answer has parts of a counted item, or quantities off a pack.
		let split = 0;
		for (const { problem } of wholeCases) {
			const measured = {
				...problem,
				items: problem.items.map(({ orderMultiple: _m, ...i }) => ({ ...i, wholeUnits: false })),
				bids: problem.bids.map(({ packSize: _p, ...b }) => b)
			};
			const result = await solveAward(measured, pool, { gap: 1e-9 });
			const itemOf = new Map(problem.items.map((i) => [i.ref, i]));
			if (
				result.awards.some((l) => {
					const bid = problem.bids.find((b) => b.supplier === l.supplier && b.item === l.item);
					const step = bid ? stepOfBid(itemOf.get(l.item)!, bid) : 0;
					return !l.bundle && step > 0 && !Number.isInteger(l.quantity / step);
				})
			)
				split += 1;
		}
		// 18 of the 36 when this was written (every case the whole-unit rules leave feasible).
		expect(split).toBeGreaterThanOrEqual(15);
	});
});

const linked = linkedCases();

describe('relaxing the links (method lagrangian) against glpk.js', () => {
	// The method may stop short of the optimum, but what it reports must hold against the independent
	// solver: its bound never above glpk.js's optimum, its award never below it and keeping every rule,
	// "optimal" only at glpk.js's optimum, and no award at all where glpk.js finds none.
	const outcomes: { seed: number; status: string }[] = [];
	it.each(linked)(
		'reports a bound and an award glpk.js confirms (seed $seed)',
		async ({ seed, problem }) => {
			const mine = await solveAward(problem, pool, { method: 'lagrangian' });
			expect(mine.method).toBe('lagrangian');
			outcomes.push({ seed, status: mine.status });
			const theirs = glpk.solve(glpkFormulation(problem, glpk), { msglev: glpk.GLP_MSG_OFF, mipgap: 0 });
			if (theirs.result.status !== glpk.GLP_OPT) {
				expect(theirs.result.status).toBe(glpk.GLP_NOFEAS);
				expect(['infeasible', 'no_solution_in_time']).toContain(mine.status);
				expect(mine.awards).toEqual([]);
				return;
			}
			const optimum = theirs.result.z;
			const tolerance = 1e-6 * Math.max(1, Math.abs(optimum));
			expect(mine.bound).not.toBeNull();
			expect(mine.bound!).toBeLessThanOrEqual(optimum + tolerance);
			if (mine.status === 'no_solution_in_time') return;
			expect(['optimal', 'feasible']).toContain(mine.status);
			expect(mine.violations).toEqual([]);
			expect(mine.totalCost!).toBeGreaterThanOrEqual(optimum - tolerance);
			expect(mine.gap!).toBeCloseTo((mine.totalCost! - mine.bound!) / mine.totalCost!, 9);
			if (mine.status === 'optimal')
				expect(Math.abs(mine.totalCost! - optimum)).toBeLessThanOrEqual(tolerance);
		},
		60_000
	);

	it('finds an award in most cases and proves some optimal', () => {
		// 22 awards (8 proven optimal) of the 24 cases, 2 infeasible, when this was written.
		expect(
			outcomes.filter((o) => o.status === 'optimal' || o.status === 'feasible').length
		).toBeGreaterThanOrEqual(18);
		expect(outcomes.filter((o) => o.status === 'optimal').length).toBeGreaterThanOrEqual(4);
		const kinds = new Set(
			linked.flatMap((c) =>
				c.problem.rules.map((r) => JSON.stringify([r.type, 'scope' in r ? r.scope : null]))
			)
		);
		for (const kind of [
			'["max_share",{"lot":"L1"}]',
			'["supplier_count",{"lot":"L2"}]',
			'["min_share","event"]',
			'["supplier_count","event"]',
			'["max_spend","event"]',
			'["award_fixed_cost",null]'
		])
			expect(kinds).toContain(kind);
	});
});

/**
 * Seeded cases for the bound that keeps each supplier whole: the item rules with a small-business floor
 * and at most 2 or 3 suppliers over the event, and fixed costs per supplier awarded (5% of an average
 * supplier's share of the baseline spend, with and without the item rules), some with capacities and
 * price breaks.
 */
function supplierBoundCases(): { seed: number; problem: AwardProblem }[] {
	return Array.from({ length: 8 }, (_, k) => {
		const seed = 7000 + k;
		const problem = generateProblem({
			items: 10 + (k % 4),
			suppliers: 5 + (k % 2),
			seed,
			bidShare: 1,
			capacity: k % 3 !== 1,
			priceBreaks: k % 3 === 2,
			smallBusinessEvery: 3
		});
		const baseline = fixedCostBenchmarkRule(problem);
		const fixed: AwardRule = {
			type: 'award_fixed_cost',
			per: 'supplier',
			amount: baseline.type === 'award_fixed_cost' ? 2.5 * baseline.amount : 0
		};
		const event: AwardRule[] = [
			{ type: 'min_share', scope: 'event', who: { tag: 'small_business' }, percent: 15 },
			{ type: 'supplier_count', scope: 'event', max: 2 + (k % 2) }
		];
		problem.rules = k < 4 ? [...benchmarkRules, ...event] : [...(k % 2 ? benchmarkRules : []), fixed];
		return { seed, problem };
	});
}

describe('the bound that keeps each supplier whole (supplier-bound.ts) against glpk.js', () => {
	// Its value at any prices must not exceed the optimum glpk.js proves, nor the method's bound with it;
	// and it must add something to the bound over item blocks (method lagrangian without it, 10 s each).
	const lifts: number[] = [];
	const methodLifts: number[] = [];
	it.each(supplierBoundCases())(
		'is never above the optimum glpk.js proves (seed $seed)',
		async ({ problem }) => {
			const theirs = glpk.solve(glpkFormulation(problem, glpk), { msglev: glpk.GLP_MSG_OFF, mipgap: 0 });
			expect(theirs.result.status).toBe(glpk.GLP_OPT);
			const optimum = theirs.result.z; // glpk.js, the independent solver
			const model = buildModel(problem);
			const lp = await pool.solve(model, { timeLimit: 30, relax: true });
			// Steps, not seconds, end the ascent: the value does not depend on the machine's speed.
			const mine = await supplierBound(problem, model, lp.rowDuals ?? null, 1.02 * optimum, {
				seconds: 600,
				steps: 3000
			});
			expect(mine).not.toBeNull();
			expect(mine!.bound).toBeLessThanOrEqual(optimum + 1e-6 * Math.abs(optimum));
			const before = await solveLinked(problem, pool, { gap: 1e-9 }, startClock(10), undefined, true, false);
			const after = await solveLinked(problem, pool, { gap: 1e-9 }, startClock(10));
			expect(after.bound!).toBeLessThanOrEqual(optimum + 1e-6 * Math.abs(optimum));
			lifts.push((mine!.bound - (before.bound ?? -Infinity)) / optimum);
			methodLifts.push((after.bound! - (before.bound ?? -Infinity)) / optimum);
		},
		60_000
	);

	it('lifts the bound above the bound over item blocks in some cases', () => {
		expect(lifts.filter((lift) => lift > 1e-3).length).toBeGreaterThanOrEqual(1);
		// And the method reports it: its bound with the supplier bound rises above the one without.
		expect(methodLifts.filter((lift) => lift > 1e-3).length).toBeGreaterThanOrEqual(1);
	});
});
