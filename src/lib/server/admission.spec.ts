import { describe, expect, it } from 'vitest';
import { Admission } from './admission';

const settle = () => new Promise((resolve) => setTimeout(resolve, 0));

describe('admission of reads', () => {
	it('lets `limit` in at once and the rest in arrival order as turns are given back', async () => {
		const admission = new Admission(2, 10);
		const order: number[] = [];
		const leaves: (() => void)[] = [];
		const arrivals = [1, 2, 3, 4, 5].map((n) =>
			admission.enter().then((leave) => {
				order.push(n);
				leaves.push(leave!);
			})
		);
		await settle();
		expect(order).toEqual([1, 2]);
		expect(admission.inFlight).toBe(2);
		expect(admission.waiting).toBe(3);
		leaves[1]!();
		await settle();
		expect(order).toEqual([1, 2, 3]);
		leaves[0]!();
		leaves[2]!();
		await settle();
		expect(order).toEqual([1, 2, 3, 4, 5]);
		expect(admission.inFlight).toBe(2);
		leaves[3]!();
		leaves[4]!();
		await Promise.all(arrivals);
		expect(admission.inFlight).toBe(0);
		expect(admission.waiting).toBe(0);
	});

	it('answers null at once when the queue is full, and admits again once there is room', async () => {
		const admission = new Admission(1, 1);
		const first = await admission.enter();
		const second = admission.enter();
		expect(await admission.enter()).toBeNull();
		first!();
		const leaveSecond = await second;
		expect(leaveSecond).toBeTypeOf('function');
		expect(admission.waiting).toBe(0);
		leaveSecond!();
		expect(await admission.enter()).toBeTypeOf('function');
	});

	it('counts a turn given back twice once (a finally block and an error path both calling it)', async () => {
		const admission = new Admission(1, 5);
		const leave = await admission.enter();
		const next = admission.enter();
		const third = admission.enter();
		leave!();
		leave!();
		const leaveNext = await next;
		await settle();
		// The second call did not pass another turn on: the third still waits.
		expect(admission.inFlight).toBe(1);
		expect(admission.waiting).toBe(1);
		leaveNext!();
		(await third)!();
		expect(admission.inFlight).toBe(0);
	});

	it('refuses limits that would admit nothing', () => {
		expect(() => new Admission(0, 10)).toThrow(/positive integer/);
		expect(() => new Admission(1.5, 10)).toThrow(/positive integer/);
		expect(() => new Admission(1, -1)).toThrow(/whole number/);
	});
});
