import { api } from '$lib/server/api';
import { requestContext } from '$lib/server/request-context';
import { bidStatusJson, invitedBidStatus, remindNonBidders } from '$lib/server/services/reminders';

/** Staff: which invited suppliers have bid, withdrawn or not bid yet, and the last reminder; never a price. */
export const GET = api(async (user, event) => bidStatusJson(await invitedBidStatus(user, event.params.id!)));

/** A buyer, before the deadline: mails the users of every invited supplier without a bid (once an hour). */
export const POST = api(async (user, event) =>
	remindNonBidders(user, event.params.id!, requestContext(event))
);
