// Award runs over the API, for tests: start one, and wait until it has ended.
import type { Browserless } from './http';

const json = async (response: Response) => (await response.json()) as Record<string, unknown>;

/** A JSON POST as the API's clients send it. */
export async function post(client: Browserless, path: string, body: unknown) {
	return client.request(path, {
		method: 'POST',
		body: JSON.stringify(body),
		headers: { 'content-type': 'application/json' },
		accept: 'application/json'
	});
}

/** Waits until the run has ended and returns it. */
/**
 * The run once it has ended and been explained. `timeoutMs` is a liveness deadline, not a speed target:
 * the stack has one worker, which takes award runs one at a time, so a run can wait behind other files'.
 */
export async function finished(client: Browserless, runId: string, timeoutMs = 30_000) {
	for (let k = 0; k < timeoutMs / 250; k++) {
		const run = await json(await client.get(`/api/runs/${runId}`, 'application/json'));
		// Ended, and its explanation (rule costs, sensitivity; worked out after the allocation) stored too.
		if (
			!['queued', 'running'].includes(String(run.status)) &&
			!['pending', 'running'].includes(String(run.explanationStatus))
		)
			return run;
		await new Promise((r) => setTimeout(r, 250));
	}
	throw new Error('the run did not end in time');
}
