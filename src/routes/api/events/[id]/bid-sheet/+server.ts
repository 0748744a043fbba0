import { api } from '$lib/server/api';
import { bidSheet } from '$lib/server/services/bids';

/** The bid sheet for the signed-in supplier: .xlsx, or CSV with ?format=csv. */
export const GET = api(async (user, event) => {
	const format = event.url.searchParams.get('format') === 'csv' ? 'csv' : 'xlsx';
	const sheet = await bidSheet(user, event.params.id!, format);
	return new Response(new Uint8Array(sheet.body), {
		headers: {
			'content-type': sheet.contentType,
			'content-disposition': `attachment; filename="${sheet.fileName}"`,
			'cache-control': 'no-store'
		}
	});
});
