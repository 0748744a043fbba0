// The rounds as the Bids tab shows them: text made here (deadlines in the event's time zone, money in
// its currency), and the form's fields turned into a round request.
import { formatChange, formatMoney, formatMoneyChange, formatUnitPrice } from '$lib/format';
import { formatInZone, toLocalInput } from '$lib/time';
import type { SessionUser } from '../auth/session-user';
import { now } from '../clock';
import type { EventRow } from '../db/events';
import type { Tabulated } from '../tabulation';
import { roundChanges, staffRounds, startRound } from './rounds';
import type { RequestContext } from './users';

const FEEDBACK = {
	none: 'no feedback',
	rank: 'each supplier’s own rank',
	gap: 'distance from the best price'
};

export async function roundsPage(user: SessionUser, event: EventRow, tab: Tabulated) {
	const [rounds, changes] = await Promise.all([staffRounds(user, event.id), roundChanges(user, event.id)]);
	const zone = event.time_zone;
	const when = (d: Date) => `${formatInZone(d, zone)} (${zone})`;
	const money = (v: number | null) => (v === null ? '—' : formatMoney(v, event.currency));
	const open = rounds.find((r) => r.open);
	return {
		open: open ? { number: open.number, deadline: when(open.deadline) } : null,
		canStart:
			user.role === 'buyer' &&
			!open &&
			['closed', 'in_evaluation'].includes(event.state) &&
			!!event.opened_at,
		bidders: tab.suppliers.filter((s) => !s.withdrawn).map((s) => ({ id: s.id, name: s.name })),
		// A round starts at least a few minutes ahead; the field starts one day ahead, on the minute.
		suggestedDeadline: toLocalInput(new Date(now().getTime() + 24 * 3600_000), zone),
		timeZone: zone,
		list: [
			{
				number: 1,
				deadline: when(event.deadline),
				state: 'Opened',
				invited: 'All invited suppliers',
				feedback: '—'
			},
			...rounds.map((r) => ({
				number: r.number,
				deadline: when(r.deadline),
				state: r.open ? 'Open, sealed' : r.openedAt ? `Opened ${when(r.openedAt)}` : 'Closed, opening',
				invited: r.invited.map((s) => s.name).join(', '),
				feedback: `${FEEDBACK[r.feedback]}${r.feedback === 'none' ? '' : ` per ${r.per}`}`
			}))
		],
		changes: changes && {
			from: changes.from,
			to: changes.to,
			suppliers: changes.suppliers.map((s) => ({
				id: s.supplierOrganisationId,
				name: s.supplierName,
				before: money(s.before),
				after: money(s.after),
				revised: s.revisedIn === changes.to,
				change:
					s.before !== null && s.after !== null
						? `${formatMoneyChange(s.after - s.before, event.currency)} (${s.before > 0 ? formatChange((s.after - s.before) / s.before) : '—'})`
						: '—',
				lines: s.lines.map((l) => ({
					item: l.item,
					before: l.before === null ? 'no price' : formatUnitPrice(l.before, event.currency),
					after: l.after === null ? 'no price' : formatUnitPrice(l.after, event.currency)
				})),
				linesChanged: s.linesChanged
			}))
		}
	};
}

/** The Bids tab's form: suppliers (checkboxes), deadlineLocal, feedback and per. */
export async function startRoundFromForm(
	user: SessionUser,
	id: string,
	form: FormData,
	context: RequestContext
): Promise<string> {
	const text = (name: string) => String(form.get(name) ?? '');
	const round = await startRound(
		user,
		id,
		{
			suppliers: form.getAll('suppliers').map(String),
			deadlineLocal: text('deadlineLocal'),
			feedback: text('feedback'),
			per: text('per') || 'item'
		},
		context
	);
	return `Round ${round.number} started; each invited supplier is mailed its own feedback and the deadline.`;
}
