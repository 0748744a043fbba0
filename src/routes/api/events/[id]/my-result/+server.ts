import { api } from '$lib/server/api';
import { myResult } from '$lib/server/services/award-views';

export const GET = api((user, event) => myResult(user, event.params.id!));
