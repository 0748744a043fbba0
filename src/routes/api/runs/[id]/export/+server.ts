import { api } from '$lib/server/api';
import { runWorkbook } from '$lib/server/run-export';
import { findRun } from '$lib/server/services/award-runs';
import { runJson } from '$lib/server/services/award-views';
import { runEvaluation } from '$lib/server/services/run-evaluation';

/** The run as an .xlsx workbook (formula-injection safe). */
export const GET = api(async (user, event) => {
	const { run, event: row } = await findRun(user, event.params.id!);
	const { priceTotal } = await runEvaluation(user, run, row.id);
	const body = await runWorkbook(row.reference, runJson(run), priceTotal);
	return new Response(new Uint8Array(body), {
		headers: {
			'content-type': 'application/vnd.openxmlformats-officedocument.spreadsheetml.sheet',
			'content-disposition': `attachment; filename="run-${row.reference.replace(/[^A-Za-z0-9._-]/g, '_')}-${run.number}.xlsx"`,
			'cache-control': 'no-store'
		}
	});
});
