import { api } from '$lib/server/api';
import { eventDetail } from '$lib/server/services/event-views';

export const GET = api(async (user, event) => ({
	questions: (await eventDetail(user, event.params.id!)).questions
}));
