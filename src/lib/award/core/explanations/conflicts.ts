// When the rules cannot all hold: the feasibility relaxation (every row may give way at a price) says
// which rows must give way, and by how much, in the trade's words.
import { ruleLabel } from '../describe';
import { buildModel, type AwardModel } from '../model';
import type { AwardProblem } from '../problem';
import type { Solver } from '../solver';
import type { AwardOptions, Conflict } from '../types';

function describeGiveWay(problem: AwardProblem, model: AwardModel, row: number, amount: number): Conflict {
	const meaning = model.rows[row]!;
	const a = Math.round(amount * 1000) / 1000;
	if (meaning.kind === 'cover') {
		const d = problem.items.find((i) => i.ref === meaning.item)!.quantity;
		return {
			label: `cover of ${meaning.item}`,
			amount: a,
			text: `${meaning.item} can be covered for only ${d - a} of ${d} (${a} short)`
		};
	}
	if (meaning.kind === 'capacity') {
		return {
			label: `capacity of ${meaning.supplier}`,
			amount: a,
			text: `${meaning.supplier}'s capacity is ${a} short`
		};
	}
	if (meaning.kind === 'rule') {
		const rule = problem.rules[meaning.rule]!;
		const label = ruleLabel(rule, meaning.rule);
		const where = meaning.items.length === 1 ? ` on ${meaning.items[0]}` : '';
		if ((rule.type === 'max_share' || rule.type === 'min_share') && meaning.unit === 'quantity') {
			const d = meaning.items.reduce((s, i) => s + problem.items.find((x) => x.ref === i)!.quantity, 0);
			const needed = rule.percent + ((rule.type === 'max_share' ? 1 : -1) * (100 * a)) / d;
			const verb = rule.type === 'max_share' ? 'rise' : 'fall';
			return {
				label,
				amount: a,
				text: `the ${rule.percent}% share ${rule.type === 'max_share' ? 'cap' : 'floor'}${where} (${label}) must ${verb} to ${Math.round(needed * 10) / 10}%`
			};
		}
		if (rule.type === 'supplier_count') {
			return {
				label,
				amount: a,
				text: `${label}${where} must allow ${Math.round(a)} ${rule.max !== undefined ? 'more' : 'fewer'} supplier${Math.round(a) === 1 ? '' : 's'}`
			};
		}
		if (rule.type === 'min_award') {
			return { label, amount: a, text: `the minimum award${where} (${label}) must fall by ${a}` };
		}
		if (rule.type === 'exclude') {
			return { label, amount: a, text: `the exclusion${where} (${label}) must let ${a} units through` };
		}
		return {
			label,
			amount: a,
			text: `${label}${where} must give way by ${a} ${meaning.unit === 'spend' ? problem.currency : 'units'}`
		};
	}
	return { label: 'structure', amount: a, text: `an internal row must give way by ${a}` };
}

export async function conflicts(
	problem: AwardProblem,
	solver: Solver,
	options: AwardOptions
): Promise<Conflict[]> {
	const model = buildModel(problem, { elastic: true });
	const outcome = await solver.solve(model, options);
	if (!outcome.columns) return [];
	const found: Conflict[] = [];
	model.columns.forEach((meaning, j) => {
		if (meaning.kind === 'slack' && outcome.columns![j]! > 1e-6)
			found.push(describeGiveWay(problem, model, meaning.row, outcome.columns![j]!));
	});
	return found;
}
