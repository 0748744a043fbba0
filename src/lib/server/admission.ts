/**
 * Admission of page and API reads, in arrival order, a few at a time per web process.
 *
 * Node interleaves every request it has accepted at each `await`, so under load each one's time is shared
 * with all the others in flight (processor sharing): with 50 open connections the average is fine but the
 * slowest twentieth waits twice as long as the median, and memory (and with it garbage collection) grows
 * with the number in flight. Letting a few in at a time and the rest wait in a first-come-first-served
 * queue keeps the same throughput while every request's wait is about the same, and a request that
 * waits too long (a queue longer than the process can serve) is answered 503 at once instead of late.
 */
export class Admission {
	#inFlight = 0;
	readonly #waiting: (() => void)[] = [];

	constructor(
		/** Requests served at once. */
		readonly limit: number,
		/** Requests that may wait for a turn; one more is refused. */
		readonly queueLimit: number
	) {
		if (!Number.isInteger(limit) || limit < 1)
			throw new Error(`admission limit must be a positive integer, not ${limit}`);
		if (!Number.isInteger(queueLimit) || queueLimit < 0)
			throw new Error(`admission queue limit must be a whole number, not ${queueLimit}`);
	}

	get inFlight() {
		return this.#inFlight;
	}

	get waiting() {
		return this.#waiting.length;
	}

	/**
	 * Resolves with the function that gives the turn back (call it exactly once, when the answer is made), or
	 * with null at once when the queue is full.
	 */
	enter(): Promise<(() => void) | null> {
		if (this.#inFlight < this.limit) {
			this.#inFlight++;
			return Promise.resolve(this.#leaver());
		}
		if (this.#waiting.length >= this.queueLimit) return Promise.resolve(null);
		return new Promise((resolve) => this.#waiting.push(() => resolve(this.#leaver())));
	}

	#leaver() {
		let left = false;
		return () => {
			if (left) return;
			left = true;
			const next = this.#waiting.shift();
			// The turn passes straight to the next in line: the count in flight does not change.
			if (next) next();
			else this.#inFlight--;
		};
	}
}
