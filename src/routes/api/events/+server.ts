import { api } from '$lib/server/api';
import { eventsFor } from '$lib/server/services/event-views';

export const GET = api(async (user) => ({ events: await eventsFor(user) }));
