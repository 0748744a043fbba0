import { api } from '$lib/server/api';
import { eventDetail } from '$lib/server/services/event-views';

export const GET = api((user, event) => eventDetail(user, event.params.id!));
