import { api } from '$lib/server/api';
import { eventTrailJson, eventTrailXlsx } from '$lib/server/services/trail-views';

/** The decision trail with its verification; `?format=xlsx` for the workbook. Staff only. */
export const GET = api(async (user, event) => {
	if (event.url.searchParams.get('format') !== 'xlsx') return eventTrailJson(user, event.params.id!);
	const { body, reference } = await eventTrailXlsx(user, event.params.id!);
	return new Response(new Uint8Array(body), {
		headers: {
			'content-type': 'application/vnd.openxmlformats-officedocument.spreadsheetml.sheet',
			'content-disposition': `attachment; filename="trail-${reference.replace(/[^A-Za-z0-9._-]/g, '_')}.xlsx"`,
			'cache-control': 'no-store'
		}
	});
});
