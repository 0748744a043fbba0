import { describe, expect, it } from 'vitest';
import { BoundedCache } from './bounded-cache';

describe('the bounded cache', () => {
	it('drops the least recently used entries once the total weight is over the bound', () => {
		const cache = new BoundedCache<string>(10);
		cache.set('a', 'A', 4);
		cache.set('b', 'B', 4);
		expect(cache.get('a')).toBe('A'); // a is now the most recently used
		cache.set('c', 'C', 4); // 12 > 10: b goes, not a
		expect(cache.get('b')).toBeUndefined();
		expect(cache.get('a')).toBe('A');
		expect(cache.get('c')).toBe('C');
		expect(cache.weight).toBe(8);
		expect(cache.size).toBe(2);
	});

	it('replaces an entry under the same key without counting its weight twice', () => {
		const cache = new BoundedCache<number>(10);
		cache.set('a', 1, 6);
		cache.set('a', 2, 6);
		expect(cache.get('a')).toBe(2);
		expect(cache.weight).toBe(6);
	});

	it('does not store a value heavier than the whole cache, and keeps what it had', () => {
		const cache = new BoundedCache<string>(10);
		cache.set('a', 'A', 5);
		expect(cache.set('huge', 'H', 11)).toBe('H');
		expect(cache.get('huge')).toBeUndefined();
		expect(cache.get('a')).toBe('A');
	});

	it('freezes what it stores, deeply, so no request can change what the next one reads', () => {
		const cache = new BoundedCache<{ awards: { quantity: number }[] }>(10);
		const stored = cache.set('run', { awards: [{ quantity: 1 }] }, 1);
		expect(() => stored.awards.push({ quantity: 2 })).toThrow(TypeError);
		expect(() => {
			stored.awards[0]!.quantity = 5;
		}).toThrow(TypeError);
		expect(cache.get('run')!.awards).toEqual([{ quantity: 1 }]);
	});
});
