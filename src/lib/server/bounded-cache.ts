/**
 * A process-local cache of values that never change under their key (a finished run's result under its
 * SHA-256, an opened event's bids under their revision numbers), bounded by a total weight and emptied
 * least-recently-used first. A Map keeps insertion order, so re-inserting on every hit is the whole LRU;
 * a package for these few lines was not worth a dependency.
 *
 * Values are frozen deeply when stored: every request that hits the cache shares the same objects, so a
 * caller that changed one would change it for all of them; frozen, it throws instead.
 */
export class BoundedCache<V> {
	readonly #entries = new Map<string, { value: V; weight: number }>();
	#weight = 0;

	constructor(readonly maxWeight: number) {}

	get(key: string): V | undefined {
		const entry = this.#entries.get(key);
		if (!entry) return undefined;
		this.#entries.delete(key);
		this.#entries.set(key, entry);
		return entry.value;
	}

	/** Stores `value` (frozen) and returns it; one heavier than the whole cache is returned unstored. */
	set(key: string, value: V, weight: number): V {
		deepFreeze(value);
		if (weight > this.maxWeight) return value;
		const old = this.#entries.get(key);
		if (old) {
			this.#weight -= old.weight;
			this.#entries.delete(key);
		}
		this.#entries.set(key, { value, weight });
		this.#weight += weight;
		for (const [oldest, entry] of this.#entries) {
			if (this.#weight <= this.maxWeight) break;
			this.#entries.delete(oldest);
			this.#weight -= entry.weight;
		}
		return value;
	}

	get size() {
		return this.#entries.size;
	}

	get weight() {
		return this.#weight;
	}

	clear() {
		this.#entries.clear();
		this.#weight = 0;
	}
}

function deepFreeze(value: unknown): void {
	if (value === null || typeof value !== 'object' || Object.isFrozen(value)) return;
	Object.freeze(value);
	for (const child of Object.values(value)) deepFreeze(child);
}
