// Award plans: the rules a run solves under. Every event has the lowest-cost plan (no rules) from the
// opening of its bids (made in closeIfDue's transaction, services/events.ts; the migration
// 20261204010000 made it for the events opened before), so listing plans only reads. A changed plan sends
// an event awaiting sign-off back to evaluation.
import { ruleSchema, type AwardRule } from '$lib/award/core/problem';
import { namesById, rulesBySupplierId, suppliersNamed, type InvitedSupplier } from '$lib/plan-suppliers';
import type { SessionUser } from '../auth/session-user';
import { now } from '../clock';
import * as awards from '../db/awards';
import {
	listInvitations,
	listItems,
	lockEvent,
	setEventState,
	type EventRow,
	type InvitationRow
} from '../db/events';
import { db, type Db } from '../db/knex';
import type { PlanRow } from '../db/tables';
import { appendTrail } from '../trail';
import { RuleViolation } from './errors';
import { evaluationEvent } from './events';

export { LOWEST_COST } from '../db/awards';

/** The event, for the staff of its buying organisation only. */
export const staffEvent = (user: SessionUser, id: string): Promise<EventRow> =>
	evaluationEvent(user, id, 'Award plans are for the buying organisation.');

/** The event, for its buyers only. */
export async function buyerOnly(user: SessionUser, id: string): Promise<EventRow> {
	const event = await staffEvent(user, id);
	if (user.role !== 'buyer')
		throw new RuleViolation('Only buyers build plans and start runs.', undefined, 403);
	return event;
}

/** The plans of an event, the lowest-cost plan first. A pure read. */
export async function listPlans(user: SessionUser, eventId: string): Promise<PlanRow[]> {
	await staffEvent(user, eventId);
	return awards.listPlans(db(), eventId);
}

export function checkRules(
	input: unknown
): { ok: true; rules: AwardRule[] } | { ok: false; problems: string[] } {
	if (!Array.isArray(input)) return { ok: false, problems: ['rules: must be a list'] };
	const problems: string[] = [];
	const rules: AwardRule[] = [];
	input.forEach((raw, k) => {
		const parsed = ruleSchema.safeParse(raw);
		// A fixed quantity is a change by hand: it is made on a run, with its justification, never in a plan.
		if (parsed.success && parsed.data.type === 'fixed_quantity')
			problems.push(`Rule ${k + 1} (type): a fixed quantity is set by changing a run by hand, not in a plan`);
		else if (parsed.success) rules.push(parsed.data as AwardRule);
		else
			problems.push(
				...parsed.error.issues.map(
					(i) => `Rule ${k + 1}${i.path.length ? ` (${i.path.join('.')})` : ''}: ${i.message}`
				)
			);
	});
	return problems.length ? { ok: false, problems } : { ok: true, rules };
}

/**
 * What a plan's rules name that the event does not have: an item, a lot, an invited supplier (by
 * organisation id or exact name) or a tag of one; each problem names the rule by its number as the plan
 * lists it (from 1). Given none, the rules as stored: suppliers by organisation id.
 */
export function checkReferences(
	rules: readonly AwardRule[],
	event: { items: readonly { ref: string; lot_ref: string | null }[]; invitations: readonly InvitationRow[] }
): { ok: true; rules: AwardRule[] } | { ok: false; problems: string[] } {
	const items = new Set(event.items.map((i) => i.ref));
	const lots = new Set(event.items.flatMap((i) => (i.lot_ref ? [i.lot_ref] : [])));
	const bySupplierId = rulesBySupplierId(rules, invitedSuppliers(event.invitations));
	const supplierProblems = bySupplierId.ok ? [] : bySupplierId.problems;
	const tags = new Set(event.invitations.flatMap((i) => i.tags));
	const problems: string[] = [];
	rules.forEach((rule, k) => {
		const at = `Rule ${k + 1}`;
		if ('scope' in rule && typeof rule.scope === 'object') {
			if ('item' in rule.scope && !items.has(rule.scope.item))
				problems.push(`${at} (scope.item): this event has no item “${rule.scope.item}”`);
			if ('lot' in rule.scope && !lots.has(rule.scope.lot))
				problems.push(`${at} (scope.lot): this event has no lot “${rule.scope.lot}”`);
		}
		if ('who' in rule && typeof rule.who === 'object') {
			if ('supplier' in rule.who) problems.push(...supplierProblems.filter((p) => p.startsWith(`${at} (`)));
			if ('tag' in rule.who && !tags.has(rule.who.tag))
				problems.push(`${at} (who.tag): no invited supplier has the tag “${rule.who.tag}”`);
		}
	});
	return problems.length || !bySupplierId.ok
		? { ok: false, problems }
		: { ok: true, rules: bySupplierId.rules };
}

export const invitedSuppliers = (invitations: readonly InvitationRow[]): InvitedSupplier[] =>
	invitations.map((i) => ({ id: i.supplier_organisation_id, name: i.supplier_name }));

/** The event's invited suppliers, by name: what a plan's rules may name (by id), and how they read. */
export async function planSuppliers(user: SessionUser, eventId: string): Promise<InvitedSupplier[]> {
	await staffEvent(user, eventId);
	return invitedSuppliers(await listInvitations(db(), eventId));
}

/** Sends an event awaiting sign-off back to evaluation, superseding the pending sign-off. */
export async function backToEvaluation(
	trx: Db,
	event: EventRow,
	actor: SessionUser,
	reason: string
): Promise<void> {
	if (event.state !== 'awaiting_signoff') return;
	await awards.supersedePendingSignoffs(trx, event.id, now(), reason);
	await setEventState(trx, event.id, 'in_evaluation');
	await appendTrail(trx, {
		eventId: event.id,
		actor,
		action: 'returned to evaluation',
		detail: { reason, state: { from: 'awaiting_signoff', to: 'in_evaluation' } }
	});
}

export async function savePlan(
	user: SessionUser,
	eventId: string,
	plan: { id?: string; name: string; rules: AwardRule[] }
): Promise<PlanRow> {
	await buyerOnly(user, eventId);
	return db().transaction(async (trx) => {
		const event = (await lockEvent(trx, eventId))!;
		if (['awarded', 'cancelled'].includes(event.state))
			throw new RuleViolation('The event is awarded: its plans are final.', undefined, 409);
		const [items, invitations] = await Promise.all([listItems(trx, eventId), listInvitations(trx, eventId)]);
		const checked = checkReferences(plan.rules, { items, invitations });
		if (!checked.ok) throw new RuleViolation(checked.problems.join('; '), 'rules', 422);
		const rules = checked.rules;
		let row: PlanRow;
		if (plan.id) {
			const existing = await awards.findEventPlan(trx, eventId, plan.id);
			if (!existing) throw new RuleViolation('There is no such plan in this event.', undefined, 404);
			if (existing.lowest_cost)
				throw new RuleViolation('The lowest-cost plan has no rules by definition.', undefined, 409);
			row = await awards.updatePlan(trx, plan.id, { name: plan.name, rules });
			await backToEvaluation(trx, event, user, `plan “${plan.name}” changed`);
		} else {
			if (await awards.findPlanByName(trx, eventId, plan.name))
				throw new RuleViolation(`A plan named “${plan.name}” exists already.`, 'name', 409);
			row = await awards.insertPlan(trx, { eventId, name: plan.name, rules, createdBy: user.id });
		}
		await appendTrail(trx, {
			eventId,
			actor: user,
			action: plan.id ? 'plan changed' : 'plan created',
			detail: {
				plan: row.id,
				name: plan.name,
				rules,
				suppliers: suppliersNamed(rules, namesById(invitedSuppliers(invitations)))
			}
		});
		return row;
	});
}
