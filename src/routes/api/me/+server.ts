import { json } from '@sveltejs/kit';
import { requireUser } from '$lib/server/auth/guard';
import type { RequestHandler } from './$types';

export const GET: RequestHandler = (event) => json(requireUser(event));
