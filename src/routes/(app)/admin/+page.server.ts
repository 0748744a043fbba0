import { fail } from '@sveltejs/kit';
import { z } from 'zod';
import type { CautionKey } from '$lib/cautions';
import { requireRole } from '$lib/server/auth/guard';
import { setStandstill, standstillOf } from '$lib/server/services/organisations';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'admin');
	const cautions: CautionKey[] = ['standstill'];
	return { title: 'Home', user, cautions, standstillDays: await standstillOf(user) };
};

const standstill = z.coerce
	.number('A number of calendar days.')
	.int('A whole number of calendar days.')
	.min(0, 'At least 0 days.')
	.max(365, 'At most 365 days.');

export const actions: Actions = {
	standstill: async (event) => {
		const user = requireRole(event, 'admin');
		const parsed = standstill.safeParse((await event.request.formData()).get('standstillDays'));
		if (!parsed.success) return fail(400, { error: parsed.error.issues[0]!.message });
		await setStandstill(user, parsed.data);
		return { ok: `Saved: award notices give a standstill end ${parsed.data} calendar days after dispatch.` };
	}
};
