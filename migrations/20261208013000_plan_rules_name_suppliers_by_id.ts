import type { Knex } from 'knex';

// A plan's rule names its supplier (`who.supplier`) by organisation id, no longer by name. Supplier names
// are unique per kind, case-insensitively (organisations_kind_name_unique), so each stored name finds one
// organisation; a name that finds none is left as it was and the run refuses it by its rule number. Runs
// keep their problem snapshots as they are: the engine names suppliers by name, and those are hashed.

type Rule = { who?: unknown } & Record<string, unknown>;
type PlanRules = { id: string; rules: Rule[] };

async function renameSuppliers(knex: Knex, to: (supplier: string) => string | undefined): Promise<void> {
	const plans: PlanRules[] = await knex('award_plans')
		.select('id', 'rules')
		.whereRaw(`jsonb_path_exists(rules, '$[*].who.supplier')`);
	for (const plan of plans) {
		const rules = plan.rules.map((rule) => {
			const who = rule.who as { supplier?: unknown } | undefined;
			if (typeof who !== 'object' || who === null || typeof who.supplier !== 'string') return rule;
			const renamed = to(who.supplier);
			return renamed === undefined ? rule : { ...rule, who: { ...who, supplier: renamed } };
		});
		await knex('award_plans')
			.where({ id: plan.id })
			.update({ rules: JSON.stringify(rules) });
	}
}

const suppliers = (knex: Knex): Promise<{ id: string; name: string }[]> =>
	knex('organisations').where({ kind: 'supplier' }).select('id', 'name');

export async function up(knex: Knex): Promise<void> {
	const idOf = new Map((await suppliers(knex)).map((s) => [s.name.toLowerCase(), s.id]));
	await renameSuppliers(knex, (name) => idOf.get(name.toLowerCase()));
}

export async function down(knex: Knex): Promise<void> {
	const nameOf = new Map((await suppliers(knex)).map((s) => [s.id, s.name]));
	await renameSuppliers(knex, (id) => nameOf.get(id));
}
