import { json } from '@sveltejs/kit';
import { databaseHealthy } from '$lib/server/services/organisations';
import type { RequestHandler } from './$types';

/** For the process supervisor and load balancers: up when the database answers. */
export const GET: RequestHandler = async () =>
	(await databaseHealthy())
		? json({ status: 'ok' })
		: json({ status: 'database unavailable' }, { status: 503 });
