// Award rules in plain words, for the plan preview, the run page and the decision trail.
import type { AwardRule, Scope, Who } from './problem';

/** "any item", "the whole event", "item IT-7", "lot L2". */
function place(scope: Scope): string {
	if (scope === 'each_item') return 'any item';
	if (scope === 'event') return 'the whole event';
	if ('item' in scope) return `item ${scope.item}`;
	return `lot ${scope.lot}`;
}

const capital = (text: string) => text.charAt(0).toUpperCase() + text.slice(1);

/** The subject of a sentence about who: a named supplier, the tagged ones, or null for "each supplier". */
function named(who: Who): string | null {
	if (who === 'each_supplier') return null;
	if ('supplier' in who) return who.supplier;
	return `Suppliers tagged “${who.tag}” together`;
}

export function describeRule(rule: AwardRule, currency = ''): string {
	const money = (amount: number) => `${amount}${currency ? ` ${currency}` : ''}`;
	switch (rule.type) {
		case 'max_share': {
			const basis =
				rule.basis === 'spend' ? ' of the spend' : rule.basis === 'quantity' ? ' of the quantity' : '';
			const who = named(rule.who);
			const limit = `${rule.percent}%${basis} of ${place(rule.scope)}`;
			const verb = typeof rule.who === 'object' && 'tag' in rule.who ? 'get' : 'gets';
			return who ? `${who} ${verb} no more than ${limit}` : `No supplier gets more than ${limit}`;
		}
		case 'min_share': {
			const basis = rule.basis === 'spend' ? ' of the spend' : '';
			const who = named(rule.who);
			const verb = typeof rule.who === 'object' && 'tag' in rule.who ? 'get' : 'gets';
			return `${who ?? 'Every supplier'} ${verb} at least ${rule.percent}%${basis} of ${place(rule.scope)}`;
		}
		case 'min_award': {
			const amount =
				rule.quantity !== undefined ? `${rule.quantity} units` : `${rule.percentOfItem}% of the item`;
			const where = rule.scope === 'each_item' ? 'an item' : place(rule.scope);
			return `If ${named(rule.who) ?? 'a supplier'} wins part of ${where}, it gets at least ${amount}`;
		}
		case 'supplier_count': {
			const where = rule.scope === 'each_item' ? 'Each item' : capital(place(rule.scope));
			const plural = (n: number) => `${n} supplier${n === 1 ? '' : 's'}`;
			if (rule.min !== undefined && rule.max !== undefined)
				return rule.min === rule.max
					? `${where} goes to exactly ${plural(rule.min)}`
					: `${where} goes to between ${rule.min} and ${rule.max} suppliers`;
			if (rule.min !== undefined) return `${where} goes to at least ${plural(rule.min)}`;
			return `${where} goes to at most ${plural(rule.max!)}`;
		}
		case 'max_spend':
			return `${named(rule.who) ?? 'Each supplier'} is paid no more than ${money(rule.amount)} for ${place(rule.scope)}`;
		case 'exclude':
			return named(rule.who)
				? `${named(rule.who)} gets nothing of ${place(rule.scope)}`
				: `No supplier gets anything of ${place(rule.scope)}`;
		case 'fixed_quantity':
			return `${rule.who.supplier} gets exactly ${rule.quantity} of item ${rule.scope.item}`;
		case 'award_fixed_cost':
			if (rule.who)
				return `${rule.who.supplier} adds ${money(rule.amount)} if awarded anything${rule.per === 'supplier' ? '' : ' (per item won)'}`;
			return rule.per === 'supplier'
				? `Each supplier awarded anything adds ${money(rule.amount)} for its contract`
				: `Each item awarded to a supplier adds ${money(rule.amount)} for that award`;
	}
}

/** A rule's own label, else "rule 3 (max share)": how explanations name it. */
export function ruleLabel(rule: AwardRule, index: number): string {
	return rule.label ?? `rule ${index + 1} (${rule.type.replace('_', ' ')})`;
}
