import { api } from '$lib/server/api';
import { tabulationEvaluated } from '$lib/server/services/criteria';
import { RuleViolation } from '$lib/server/services/errors';
import { roundChanges } from '$lib/server/services/rounds';
import { staffTabulation, tabulationQuery, viewTabulation } from '$lib/server/services/tabulation';
import { tabulationWorkbook } from '$lib/server/sheets/tabulation-sheet';

/**
 * The opened-bids tabulation with the Bids tab's filters and sort (`lot`, `bidder`, `lowest`, `q`, `sort`,
 * `dir`): as JSON, a page at a time (`page`, `pageSize` up to 500), or with `format=xlsx` every matching row
 * as a workbook. Staff of the buying organisation only, after the deadline.
 */
export const GET = api(async (user, event) => {
	const found = await staffTabulation(user, event.params.id!);
	if (found.sealed)
		throw new RuleViolation(
			'Bids are sealed until the deadline: there is no tabulation yet.',
			undefined,
			409
		);
	const params = event.url.searchParams;
	const { tab } = found;
	if (params.get('format') === 'xlsx') {
		const view = viewTabulation(tab, {
			...tabulationQuery(params),
			page: 1,
			pageSize: Number.MAX_SAFE_INTEGER
		});
		const filters = ['lot', 'bidder', 'lowest', 'q']
			.flatMap((name) => (params.get(name) ? [`${name}=${params.get(name)}`] : []))
			.join(', ');
		const [evaluated, rounds] = await Promise.all([
			tabulationEvaluated(user, found.event.id, tab),
			roundChanges(user, found.event.id)
		]);
		const body = await tabulationWorkbook(found.event, tab, view.rows, filters, {
			evaluated: evaluated?.totals ?? null,
			rounds
		});
		const reference = found.event.reference.replace(/[^A-Za-z0-9._-]/g, '_');
		return new Response(new Uint8Array(body), {
			headers: {
				'content-type': 'application/vnd.openxmlformats-officedocument.spreadsheetml.sheet',
				'content-disposition': `attachment; filename="bids-${reference}.xlsx"`,
				'cache-control': 'no-store'
			}
		});
	}
	const asked = Number.parseInt(params.get('pageSize') ?? '50', 10);
	const pageSize = Number.isInteger(asked) ? Math.min(500, Math.max(1, asked)) : 50;
	const view = viewTabulation(tab, tabulationQuery(params, pageSize));
	const width = tab.suppliers.length;
	return {
		summary: tab.summary,
		suppliers: tab.suppliers,
		page: view.page,
		pages: view.pages,
		matched: view.matched,
		items: view.rows.map((r) => ({
			...tab.items[r],
			lowestBy: tab.items[r]!.lowestBy.map((c) => tab.suppliers[c]!.id),
			prices: Object.fromEntries(
				tab.suppliers.flatMap((s, c) => {
					const price = tab.prices[r * width + c]!;
					return Number.isNaN(price) ? [] : [[s.id, price]];
				})
			)
		}))
	};
});
