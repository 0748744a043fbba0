import { fail } from '@sveltejs/kit';
import { questionSchema } from '$lib/schemas/events';
import { requireRole } from '$lib/server/auth/guard';
import { requestContext } from '$lib/server/request-context';
import { orErrorPage, orFail } from '$lib/server/route-errors';
import { myResult } from '$lib/server/services/award-views';
import { ownBid, submitScreen, withdraw } from '$lib/server/services/bids';
import { bidJson, eventDetail, eventSheet, itemsFor } from '$lib/server/services/event-views';
import { askQuestion } from '$lib/server/services/events';
import { CURRENCY_COLUMN, priceColumns } from '$lib/server/sheets/bid-sheet';
import { eventRates } from '$lib/server/services/currencies';
import { supplierRounds } from '$lib/server/services/rounds';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'supplier');
	return orErrorPage(event, async () => {
		const [detail, items, own, result, sheet, rates, rounds] = await Promise.all([
			eventDetail(user, event.params.id),
			itemsFor(user, event.params.id),
			ownBid(user, event.params.id),
			myResult(user, event.params.id),
			eventSheet(user, event.params.id),
			eventRates(user, event.params.id),
			supplierRounds(user, event.params.id)
		]);
		return {
			title: detail.event.reference,
			detail,
			result,
			items,
			// The columns a supplier types, after the item columns of the sheet.
			// The currency is one select for the whole bid, not a cell per item.
			priceColumns: priceColumns(sheet)
				.slice(5)
				.filter((c) => c !== CURRENCY_COLUMN),
			rates,
			criteria: sheet.criteria ?? [],
			current: own.current ? bidJson(own.current) : null,
			lastPriced: own.lastPriced ? bidJson(own.lastPriced) : null,
			revisions: own.revisions.map((r) => ({
				number: r.number,
				source: r.source,
				submittedAt: r.submitted_at.toISOString()
			})),
			uploads: own.uploads.map((u) => ({
				id: u.id,
				fileName: u.file_name,
				sha256: u.sha256,
				status: u.status,
				report: u.report,
				problemCount: u.problem_count,
				receivedAt: u.received_at.toISOString()
			})),
			uploadCount: own.uploadCount,
			// Only the rounds this supplier is invited to, each with its own feedback.
			rounds: rounds.map((r) => ({ ...r, deadline: r.deadline.toISOString() }))
		};
	});
};

export const actions: Actions = {
	prices: async (event) => {
		const user = requireRole(event, 'supplier');
		const data = await event.request.formData();
		let entries: { item: string; cells: (string | null)[] }[];
		try {
			entries = JSON.parse(String(data.get('entries') ?? '[]'));
			if (!Array.isArray(entries)) throw new Error('not a list');
		} catch {
			return fail(400, { action: 'prices' as const, error: 'The price table could not be read.' });
		}
		const capacity = data.get('capacity');
		const currency = data.get('currency');
		const answers = Object.fromEntries(
			[...data.entries()]
				.filter(([name]) => name.startsWith('answer:'))
				.map(([name, value]) => [name.slice('answer:'.length), typeof value === 'string' ? value : null])
		);
		return orFail(
			async () => {
				const outcome = await submitScreen(
					user,
					event.params.id,
					entries,
					typeof capacity === 'string' ? capacity : null,
					requestContext(event),
					typeof currency === 'string' ? currency : null,
					answers
				);
				if (!outcome.ok) return fail(422, { problems: outcome.problems, problemCount: outcome.problemCount });
				return {
					action: 'prices' as const,
					accepted: `Accepted as revision ${outcome.revision.number}.`,
					at: outcome.revision.submitted_at.toISOString()
				};
			},
			(v) => ({ action: 'prices' as const, error: v.message })
		);
	},
	withdraw: async (event) => {
		const user = requireRole(event, 'supplier');
		return orFail(
			async () => {
				const revision = await withdraw(user, event.params.id, requestContext(event));
				return {
					action: 'withdraw' as const,
					accepted: `Your bid is withdrawn (revision ${revision.number}).`
				};
			},
			(v) => ({ action: 'withdraw' as const, error: v.message })
		);
	},
	ask: async (event) => {
		const user = requireRole(event, 'supplier');
		const parsed = questionSchema.safeParse(Object.fromEntries(await event.request.formData()));
		if (!parsed.success) return fail(400, { askError: parsed.error.issues[0]!.message });
		return orFail(async () => {
			await askQuestion(user, event.params.id, parsed.data.text);
			return { asked: 'Your question is sent. The answer goes to all invited suppliers, without your name.' };
		});
	}
};
