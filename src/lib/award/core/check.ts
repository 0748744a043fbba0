// An independent check of an allocation against the problem itself (not against the model that
// produced it): cover, bids and their limits, price breaks, bundles, capacities and every rule.
import { priceAtQuantity } from './prices';
import type { AwardProblem, Scope, Who } from './problem';
import type { AwardLine } from './result';
import { countedWhole, onStep, stepsOf } from './units';

const TOLERANCE = 1e-6;
const close = (a: number, b: number, scale = 1) =>
	Math.abs(a - b) <= TOLERANCE * Math.max(1, Math.abs(scale), Math.abs(a), Math.abs(b));
const atMost = (a: number, b: number) => a <= b + TOLERANCE * Math.max(1, Math.abs(b));
const atLeast = (a: number, b: number) => a >= b - TOLERANCE * Math.max(1, Math.abs(b));
/** Amounts in messages, without the float noise of a difference (0.30000000000000004). */
const round = (v: number) => Math.round(v * 1e6) / 1e6;

export function checkAllocation(problem: AwardProblem, lines: AwardLine[], uncovered: Set<string>): string[] {
	const violations: string[] = [];
	const itemOf = new Map(problem.items.map((i) => [i.ref, i]));
	// Bids by item (a few dozen each), so finding a line's bid makes no key string per bid.
	const bidsOfItem = new Map<string, AwardProblem['bids']>();
	for (const bid of problem.bids) {
		const list = bidsOfItem.get(bid.item);
		if (list) list.push(bid);
		else bidsOfItem.set(bid.item, [bid]);
	}
	const { bidStep, most } = stepsOf(problem);
	const bidIndex = new Map(problem.bids.map((bid, b) => [bid, b]));

	for (const line of lines) {
		if (line.bundle) continue;
		const bid = bidsOfItem.get(line.item)?.find((b) => b.supplier === line.supplier);
		if (!bid) {
			violations.push(`${line.supplier} is awarded ${line.item} without a bid for it`);
			continue;
		}
		if (bid.maxQuantity !== undefined && !atMost(line.quantity, bid.maxQuantity)) {
			violations.push(
				`${line.supplier} gets ${line.quantity} of ${line.item}, above its bid's maximum ${bid.maxQuantity}`
			);
		}
		const step = bidStep[bidIndex.get(bid)!]!;
		if (!onStep(line.quantity, step)) {
			const item = itemOf.get(line.item)!;
			violations.push(
				step === 1 && countedWhole(item)
					? `${line.supplier} gets ${line.quantity} of ${line.item}, not a whole number of units`
					: `${line.supplier} gets ${line.quantity} of ${line.item}, not a multiple of ${step}`
			);
		}
		const price = priceAtQuantity(bid, line.quantity, TOLERANCE);
		if (!close(line.unitPrice, price, price)) {
			violations.push(
				`${line.supplier} is paid ${line.unitPrice} a unit for ${line.quantity} of ${line.item}; its bid says ${price}`
			);
		}
	}
	const bundleLines = new Map<string, AwardLine[]>();
	for (const line of lines)
		if (line.bundle) bundleLines.set(line.bundle, [...(bundleLines.get(line.bundle) ?? []), line]);
	for (const [ref, taken] of bundleLines) {
		const bundle = problem.bundles.find((b) => b.ref === ref);
		if (!bundle) {
			violations.push(`bundle ${ref} does not exist`);
			continue;
		}
		const complete =
			taken.length === bundle.items.length &&
			bundle.items.every((l) =>
				taken.some(
					(t) => t.item === l.item && close(t.quantity, l.quantity) && t.supplier === bundle.supplier
				)
			);
		if (!complete) violations.push(`bundle ${ref} is taken only in part`);
		const cost = taken.reduce((a, t) => a + t.cost, 0);
		if (!close(cost, bundle.price, bundle.price))
			violations.push(`bundle ${ref} costs ${cost}, not its price ${bundle.price}`);
	}

	// Totals by supplier and item, so every rule is checked by lookups rather than scans.
	const pairQuantity = new Map<string, number>();
	const pairSpend = new Map<string, number>();
	const itemQuantity = new Map<string, number>();
	const itemSpend = new Map<string, number>();
	const itemWinners = new Map<string, Set<string>>();
	const supplierQuantity = new Map<string, number>();
	const add = (m: Map<string, number>, k: string, v: number) => m.set(k, (m.get(k) ?? 0) + v);
	for (const l of lines) {
		add(pairQuantity, `${l.supplier}|${l.item}`, l.quantity);
		add(pairSpend, `${l.supplier}|${l.item}`, l.cost);
		add(itemQuantity, l.item, l.quantity);
		add(itemSpend, l.item, l.cost);
		add(supplierQuantity, l.supplier, l.quantity);
		if (l.quantity > TOLERANCE) {
			let winners = itemWinners.get(l.item);
			if (!winners) itemWinners.set(l.item, (winners = new Set()));
			winners.add(l.supplier);
		}
	}
	const quantity = (s: string | null, items: string[]) =>
		items.reduce(
			(a, i) => a + (s === null ? (itemQuantity.get(i) ?? 0) : (pairQuantity.get(`${s}|${i}`) ?? 0)),
			0
		);
	const spend = (suppliers: string[] | null, items: string[]) =>
		items.reduce(
			(a, i) =>
				a +
				(suppliers === null
					? (itemSpend.get(i) ?? 0)
					: suppliers.reduce((b, s) => b + (pairSpend.get(`${s}|${i}`) ?? 0), 0)),
			0
		);

	for (const item of problem.items) {
		if (uncovered.has(item.ref)) {
			if (quantity(null, [item.ref]) > TOLERANCE) violations.push(`${item.ref} has no offer but is awarded`);
			continue;
		}
		const got = quantity(null, [item.ref]);
		const upTo = most.get(item.ref)!;
		const covered =
			upTo > item.quantity
				? atLeast(got, item.quantity) && atMost(got, upTo)
				: close(got, item.quantity, item.quantity);
		if (!covered)
			violations.push(
				`${item.ref} is covered for ${got} of ${item.quantity}${upTo > item.quantity ? ` (up to ${upTo} in whole steps)` : ''}`
			);
	}
	for (const supplier of problem.suppliers) {
		if (supplier.capacity === undefined) continue;
		const used = supplierQuantity.get(supplier.ref) ?? 0;
		if (!atMost(used, supplier.capacity))
			violations.push(`${supplier.ref} gets ${used} units, above its capacity ${supplier.capacity}`);
	}

	const offered = problem.items.filter((i) => !uncovered.has(i.ref)).map((i) => i.ref);
	const groups = (scope: Scope): string[][] => {
		if (scope === 'each_item') return offered.map((i) => [i]);
		if (scope === 'event') return [offered];
		if ('item' in scope) return offered.includes(scope.item) ? [[scope.item]] : [];
		return [offered.filter((i) => itemOf.get(i)?.lot === scope.lot)];
	};
	const whos = (who: Who): string[][] => {
		if (who === 'each_supplier') return problem.suppliers.map((s) => [s.ref]);
		if ('supplier' in who) return [[who.supplier]];
		return [problem.suppliers.filter((s) => s.tags?.includes(who.tag)).map((s) => s.ref)];
	};
	const demand = (items: string[]) => items.reduce((a, i) => a + itemOf.get(i)!.quantity, 0);
	const winners = (items: string[]) => new Set(items.flatMap((i) => [...(itemWinners.get(i) ?? [])]));

	problem.rules.forEach((rule, r) => {
		const name = rule.label ?? `rule ${r + 1} (${rule.type})`;
		if (rule.type === 'max_share' || rule.type === 'min_share') {
			const itemScope =
				rule.scope === 'each_item' || (typeof rule.scope === 'object' && 'item' in rule.scope);
			const basis = rule.basis ?? (itemScope ? 'quantity' : 'spend');
			for (const items of groups(rule.scope))
				for (const suppliers of whos(rule.who)) {
					if (!items.length || !suppliers.length) continue;
					const mine =
						basis === 'quantity'
							? suppliers.reduce((a, s) => a + quantity(s, items), 0)
							: spend(suppliers, items);
					const all = basis === 'quantity' ? demand(items) : spend(null, items);
					const limit = (rule.percent / 100) * all;
					const ok = rule.type === 'max_share' ? atMost(mine, limit) : atLeast(mine, limit);
					if (!ok)
						violations.push(
							`${name}: ${suppliers.join('+')} has ${round(mine)} of ${round(all)} in ${items.length === 1 ? items[0] : `${items.length} items`}, ` +
								`${rule.type === 'max_share' ? 'above' : 'under'} its ${rule.percent}% (${round(limit)}) by ${round(Math.abs(mine - limit))}`
						);
				}
		}
		if (rule.type === 'min_award') {
			for (const items of groups(rule.scope))
				for (const suppliers of whos(rule.who))
					for (const s of suppliers)
						for (const i of items) {
							const got = quantity(s, [i]);
							const d = itemOf.get(i)!.quantity;
							const minimum = Math.min(d, rule.quantity ?? ((rule.percentOfItem ?? 0) / 100) * d);
							if (got > TOLERANCE && !atLeast(got, minimum))
								violations.push(
									`${name}: ${s} gets ${got} of ${i}, under ${round(minimum)} by ${round(minimum - got)}`
								);
						}
		}
		if (rule.type === 'supplier_count') {
			for (const items of groups(rule.scope)) {
				if (!items.length) continue;
				const count = winners(items).size;
				if ((rule.min !== undefined && count < rule.min) || (rule.max !== undefined && count > rule.max)) {
					violations.push(
						`${name}: ${count} suppliers in ${items.length === 1 ? items[0] : `${items.length} items`}, ` +
							(rule.max !== undefined && count > rule.max
								? `${count - rule.max} over the most, ${rule.max}`
								: `${rule.min! - count} under the least, ${rule.min}`)
					);
				}
			}
		}
		if (rule.type === 'max_spend') {
			for (const items of groups(rule.scope))
				for (const suppliers of whos(rule.who)) {
					const total = spend(suppliers, items);
					if (!atMost(total, rule.amount))
						violations.push(
							`${name}: ${suppliers.join('+')} spend ${round(total)} above ${rule.amount} by ${round(total - rule.amount)}`
						);
				}
		}
		if (rule.type === 'fixed_quantity') {
			const [item, supplier] = [rule.scope.item, rule.who.supplier];
			const got = quantity(supplier, [item]);
			if (!close(got, rule.quantity, rule.quantity))
				violations.push(`${name}: ${supplier} gets ${got} of ${item}, not ${rule.quantity}`);
		}
		if (rule.type === 'exclude') {
			for (const items of groups(rule.scope))
				for (const suppliers of whos(rule.who)) {
					const got = suppliers.reduce((a, s) => a + quantity(s, items), 0);
					if (got > TOLERANCE)
						violations.push(`${name}: ${suppliers.join('+')} is awarded ${got} despite the exclusion`);
				}
		}
	});
	return violations;
}

/** Total cost of an allocation as the problem defines it: the lines plus award fixed costs. */
export function allocationCost(problem: AwardProblem, lines: AwardLine[]): number {
	let total = lines.reduce((a, l) => a + l.cost, 0);
	for (const rule of problem.rules) {
		if (rule.type !== 'award_fixed_cost') continue;
		const awarded = lines.filter(
			(l) => l.quantity > TOLERANCE && (!rule.who || l.supplier === rule.who.supplier)
		);
		total +=
			rule.amount *
			(rule.per === 'supplier'
				? new Set(awarded.map((l) => l.supplier)).size
				: new Set(awarded.map((l) => `${l.supplier}|${l.item}`)).size);
	}
	return total;
}
