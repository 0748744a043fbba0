import { json } from '@sveltejs/kit';
import { db } from '$lib/server/db/knex';
import type { RequestHandler } from './$types';

/** For the process supervisor and load balancers: up when the database answers. */
export const GET: RequestHandler = async () => {
	try {
		await db().raw('select 1');
		return json({ status: 'ok' });
	} catch {
		return json({ status: 'database unavailable' }, { status: 503 });
	}
};
