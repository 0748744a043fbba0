// One time limit for a whole solve, however many models it takes: each solve gets what is left.

export interface Clock {
	/** Seconds since the solve began. */
	elapsed(): number;
	/** Seconds left before the limit (never below 0). */
	left(): number;
}

/** The engine's default limit when the caller gives none, in seconds (HiGHS's own default is unlimited). */
export const DEFAULT_TIME_LIMIT = 60;

export function startClock(limitSeconds: number = DEFAULT_TIME_LIMIT): Clock {
	const began = performance.now();
	const elapsed = () => (performance.now() - began) / 1000;
	return { elapsed, left: () => Math.max(0, limitSeconds - elapsed()) };
}
