import { readFileSync, statSync } from 'node:fs';

// The server's idea of now. Every deadline decision (the seal, refusing a late bid, closing an event)
// reads it here, never new Date() on its own. In tests the clock can be moved: when CLOCK_OFFSET_FILE
// names a file holding {"offsetMs": n}, now() is the system time plus n. Production never sets it.
let cache: { file: string; mtimeMs: number; offsetMs: number } | undefined;

function offsetMs(): number {
	const file = process.env.CLOCK_OFFSET_FILE;
	if (!file) return 0;
	try {
		const { mtimeMs } = statSync(file);
		if (cache?.file !== file || cache.mtimeMs !== mtimeMs) {
			const parsed = JSON.parse(readFileSync(file, 'utf8')) as { offsetMs?: unknown };
			cache = { file, mtimeMs, offsetMs: typeof parsed.offsetMs === 'number' ? parsed.offsetMs : 0 };
		}
		return cache.offsetMs;
	} catch {
		return 0;
	}
}

export function now(): Date {
	return new Date(Date.now() + offsetMs());
}
