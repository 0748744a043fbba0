import { json } from '@sveltejs/kit';
import { isStaff } from '$lib/roles';
import { api } from '$lib/server/api';
import { jsonError } from '$lib/server/http';
import { requestContext } from '$lib/server/request-context';
import { RuleViolation } from '$lib/server/services/errors';
import { openedBids, ownBid, submitUpload, type SubmitOutcome } from '$lib/server/services/bids';
import { bidJson } from '$lib/server/services/event-views';
import { UPLOAD_LIMITS } from '$lib/server/sheets/inspect';
import { UploadLimitReached } from '$lib/server/services/upload-limits';

/** Staff: every current bid, only after the deadline (403 before). A supplier: its own current bid. */
export const GET = api(async (user, event) => {
	if (isStaff(user.role)) return { bids: (await openedBids(user, event.params.id!)).map(bidJson) };
	const own = await ownBid(user, event.params.id!);
	return { bids: own.current ? [bidJson(own.current)] : [] };
});

/** A supplier's filled bid sheet as multipart form data (field "file"): 201 with the revision, or 422. */
export const POST = api(async (user, event) => {
	if (user.role !== 'supplier') throw new RuleViolation('Only suppliers submit bids.', undefined, 403);
	const length = Number(event.request.headers.get('content-length') ?? 0);
	if (length > UPLOAD_LIMITS.bytes + 64 * 1024)
		throw new RuleViolation(`The file is larger than ${UPLOAD_LIMITS.bytes / 1024 / 1024} MB.`, 'file', 422);
	let form: FormData;
	try {
		form = await event.request.formData();
	} catch {
		throw new RuleViolation('Send the sheet as multipart/form-data in a field named "file".', 'file', 400);
	}
	const file = form.get('file');
	if (!(file instanceof File))
		throw new RuleViolation('Send the sheet in a form field named "file".', 'file', 400);
	let outcome: SubmitOutcome;
	try {
		outcome = await submitUpload(
			user,
			event.params.id!,
			{ name: file.name, bytes: Buffer.from(await file.arrayBuffer()) },
			requestContext(event)
		);
	} catch (error) {
		if (!(error instanceof UploadLimitReached)) throw error;
		const answer = jsonError(error.status, error.message, { path: event.url.pathname, userId: user.id });
		if (error.retryAfterSeconds !== null) answer.headers.set('retry-after', String(error.retryAfterSeconds));
		return answer;
	}
	// At most MAX_PROBLEMS_KEPT problems are sent, with the total found.
	if (!outcome.ok)
		return json(
			{
				message: 'The sheet was not accepted.',
				problems: outcome.problems,
				problemCount: outcome.problemCount,
				uploadId: outcome.upload?.id
			},
			{ status: 422 }
		);
	return json(
		{
			revision: {
				number: outcome.revision.number,
				submittedAt: outcome.revision.submitted_at.toISOString(),
				source: outcome.revision.source
			},
			upload: { id: outcome.upload!.id, sha256: outcome.sha256, fileName: outcome.upload!.file_name }
		},
		{ status: 201 }
	);
});
