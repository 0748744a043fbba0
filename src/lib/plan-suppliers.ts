// A plan names a supplier by its organisation id; the engine's problem names suppliers by organisation
// name (the snapshot's refs, docs/award-engine.md). These move a plan's rules between the two.
import type { AwardRule } from '$lib/award/core/problem';

/** An invited supplier: its organisation id and name. */
export interface InvitedSupplier {
	id: string;
	name: string;
}

/** Organisation id to name. */
export const namesById = (suppliers: readonly InvitedSupplier[]): ReadonlyMap<string, string> =>
	new Map(suppliers.map((s) => [s.id, s.name]));

export type Checked = { ok: true; rules: AwardRule[] } | { ok: false; problems: string[] };

const supplierOf = (rule: AwardRule): string | undefined =>
	'who' in rule && typeof rule.who === 'object' && 'supplier' in rule.who ? rule.who.supplier : undefined;

const withSupplier = (rule: AwardRule, supplier: string): AwardRule =>
	({ ...rule, who: { supplier } }) as AwardRule;

/**
 * The rules as stored: each `who.supplier`, given as an invited supplier's organisation id or its exact
 * name, becomes the id. Anything else is a problem naming the rule by its number as shown (from 1).
 */
export function rulesBySupplierId(rules: readonly AwardRule[], invited: readonly InvitedSupplier[]): Checked {
	const ids = new Set(invited.map((s) => s.id));
	const idOfName = new Map(invited.map((s) => [s.name, s.id]));
	const problems: string[] = [];
	const stored = rules.map((rule, k) => {
		const given = supplierOf(rule);
		if (given === undefined) return rule;
		const id = ids.has(given) ? given : idOfName.get(given);
		if (id === undefined) {
			problems.push(`Rule ${k + 1} (who.supplier): “${given}” is not invited to this event`);
			return rule;
		}
		return withSupplier(rule, id);
	});
	return problems.length ? { ok: false, problems } : { ok: true, rules: stored };
}

/**
 * The rules as the engine reads them: each `who.supplier` id becomes the supplier's name. An id that is
 * not among `names` (organisation id to name) is a problem naming the rule.
 */
export function rulesBySupplierName(
	rules: readonly AwardRule[],
	names: ReadonlyMap<string, string>
): Checked {
	const problems: string[] = [];
	const named = rules.map((rule, k) => {
		const id = supplierOf(rule);
		if (id === undefined) return rule;
		const name = names.get(id);
		if (name === undefined) {
			problems.push(`Rule ${k + 1} (who.supplier): the supplier “${id}” is not invited to this event`);
			return rule;
		}
		return withSupplier(rule, name);
	});
	return problems.length ? { ok: false, problems } : { ok: true, rules: named };
}

/** A rule for a person to read: the supplier's name where it is known, else the id as stored. */
export function ruleForReading(rule: AwardRule, names: ReadonlyMap<string, string>): AwardRule {
	const id = supplierOf(rule);
	const name = id === undefined ? undefined : names.get(id);
	return name === undefined ? rule : withSupplier(rule, name);
}

/** The suppliers the rules name, each once with its name where it is known: what reads beside the ids. */
export function suppliersNamed(
	rules: readonly AwardRule[],
	names: ReadonlyMap<string, string>
): { id: string; name: string | null }[] {
	const ids = [...new Set(rules.flatMap((r) => supplierOf(r) ?? []))];
	return ids.map((id) => ({ id, name: names.get(id) ?? null }));
}
