import { api } from '$lib/server/api';
import { RuleViolation } from '$lib/server/services/errors';
import { compareEventRuns, comparisonQuery } from '$lib/server/services/run-comparison';
import { comparisonWorkbook } from '$lib/server/sheets/compare-sheet';

/**
 * Two to four finished runs of the event compared (`?run=<id>&run=<id>…`, `ref` the reference run, `page`
 * of the items allocated differently): as JSON, or with `format=xlsx` as a workbook with every item.
 */
export const GET = api(async (user, event) => {
	const params = event.url.searchParams;
	const xlsx = params.get('format') === 'xlsx';
	const found = await compareEventRuns(
		user,
		event.params.id!,
		comparisonQuery(params),
		xlsx ? { pageSize: Number.MAX_SAFE_INTEGER } : {}
	);
	if (!found.compared) throw new RuleViolation(found.message, 'run', 400);
	if (!xlsx) return { event: found.event, comparison: found.comparison };
	const body = await comparisonWorkbook(found.event, found.comparison);
	const reference = found.event.reference.replace(/[^A-Za-z0-9._-]/g, '_');
	const numbers = found.comparison.runs.map((r) => r.number).join('-');
	return new Response(new Uint8Array(body), {
		headers: {
			'content-type': 'application/vnd.openxmlformats-officedocument.spreadsheetml.sheet',
			'content-disposition': `attachment; filename="runs-compared-${reference}-${numbers}.xlsx"`,
			'cache-control': 'no-store'
		}
	});
});
