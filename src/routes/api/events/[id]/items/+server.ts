import { api } from '$lib/server/api';
import { itemsFor } from '$lib/server/services/event-views';

export const GET = api(async (user, event) => ({ items: await itemsFor(user, event.params.id!) }));
