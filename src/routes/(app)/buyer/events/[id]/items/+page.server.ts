import { fail } from '@sveltejs/kit';
import { requireRole } from '$lib/server/auth/guard';
import { orFail } from '$lib/server/route-errors';
import { itemsFor } from '$lib/server/services/event-views';
import { importItems, saveItems } from '$lib/server/services/events';
import { ITEM_COLUMNS, validateItemRows, type RawItemRow } from '$lib/server/sheets/item-import';
import type { Actions, PageServerLoad } from './$types';

export const load: PageServerLoad = async (event) => {
	const user = requireRole(event, 'buyer');
	return { items: await itemsFor(user, event.params.id), columns: ITEM_COLUMNS.map((c) => ({ ...c })) };
};

const headerOf = Object.fromEntries(ITEM_COLUMNS.map((c) => [c.key, c.header]));

async function store(
	user: Parameters<typeof saveItems>[0],
	id: string,
	work: () => Promise<Parameters<typeof saveItems>[2]>
) {
	return orFail(
		async () => {
			const items = await work();
			await saveItems(user, id, items);
			return { saved: `Saved ${items.length} items.` };
		},
		(v) => ({ problems: [{ sheet: '', row: null, column: null, message: v.message }] })
	);
}

export const actions: Actions = {
	save: async (event) => {
		const user = requireRole(event, 'buyer');
		const data = await event.request.formData();
		let rows: RawItemRow[];
		try {
			rows = JSON.parse(String(data.get('rows') ?? '[]')) as RawItemRow[];
			if (!Array.isArray(rows)) throw new Error('not a list');
		} catch {
			return fail(400, {
				problems: [{ sheet: 'Items table', row: null, column: null, message: 'the table could not be read' }]
			});
		}
		const checked = validateItemRows(
			'Items table',
			rows.map((cells, k) => ({ row: k + 1, cells })),
			(key) => headerOf[key]!
		);
		if (!checked.ok) return fail(422, { problems: checked.problems });
		return store(user, event.params.id, async () => checked.items);
	},
	import: async (event) => {
		const user = requireRole(event, 'buyer');
		const data = await event.request.formData();
		const file = data.get('file');
		if (!(file instanceof File) || file.size === 0)
			return fail(400, {
				problems: [{ sheet: '', row: null, column: null, message: 'Choose an .xlsx or .csv file.' }]
			});
		return orFail(
			async () => {
				const bytes = Buffer.from(await file.arrayBuffer());
				const imported = await importItems(user, event.params.id, { name: file.name, bytes });
				if (!imported.ok) return fail(422, { problems: imported.problems });
				return { saved: `Saved ${imported.saved} items.` };
			},
			(v) => ({ problems: [{ sheet: '', row: null, column: null, message: v.message }] })
		);
	}
};
