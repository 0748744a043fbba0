// A pool of worker threads, each with its own HiGHS instance (the WebAssembly build is single-threaded,
// so parallel solves need separate threads). Cancelling a solve terminates its worker; a worker is
// replaced after an error or a big solve, because HiGHS's memory grows and never shrinks.
import { createRequire } from 'node:module';
import { availableParallelism } from 'node:os';
import { pathToFileURL } from 'node:url';
import { Worker } from 'node:worker_threads';
import type { AwardModel } from '../core/model-builder';
import type { SolveOptions, SolveOutcome, SolveProgress, Solver } from '../core/solver';

export interface PoolOptions {
	size?: number;
	/** Replace a worker after a solve with at least this many matrix entries. */
	recycleAfterEntries?: number;
}

/** Above these sizes the 2 GB WebAssembly heap of HiGHS is not enough (measured on this project's machines). */
export const LIMITS = { lpEntries: 6_000_000, mipEntries: 2_000_000, mipIntegers: 200_000 };

export class ModelTooLarge extends Error {
	constructor(
		readonly entries: number,
		readonly integers: number
	) {
		super(
			`The award model is too large for the solver's memory: ${entries.toLocaleString('en')} matrix entries and ${integers.toLocaleString('en')} integer choices (limits: ${LIMITS.lpEntries.toLocaleString('en')} entries for a pure LP, ${LIMITS.mipEntries.toLocaleString('en')} entries and ${LIMITS.mipIntegers.toLocaleString('en')} integers with integer rules). Split the event into lots or simplify the rules.`
		);
		this.name = 'ModelTooLarge';
	}
}

export class SolveCancelled extends Error {
	constructor() {
		super('The solve was cancelled.');
		this.name = 'SolveCancelled';
	}
}

export function assertSolvable(model: AwardModel, options: SolveOptions = {}): void {
	const entries = model.indices.length;
	const tooBig =
		model.integers > 0 && !options.relax
			? entries > LIMITS.mipEntries || model.integers > LIMITS.mipIntegers
			: entries > LIMITS.lpEntries;
	if (tooBig) throw new ModelTooLarge(entries, model.integers);
}

interface Job {
	id: number;
	model: AwardModel;
	options: SolveOptions;
	resolve: (outcome: SolveOutcome) => void;
	reject: (error: Error) => void;
	signal?: AbortSignal;
}

interface Slot {
	worker: Worker;
	job: Job | null;
}

function startWorker(): Worker {
	if (!import.meta.url.endsWith('.ts')) return new Worker(new URL('./solver-worker.js', import.meta.url));
	// From TypeScript sources (tests, the CLI under tsx) the thread registers tsx's loader first.
	const tsx = pathToFileURL(
		createRequire(import.meta.url)
			.resolve('tsx/esm/api')
			.replace(/\.cjs$/, '.mjs')
	).href;
	const entry = new URL('./solver-worker.ts', import.meta.url).href;
	return new Worker(
		`import(${JSON.stringify(tsx)}).then((m) => { m.register(); return import(${JSON.stringify(entry)}); });`,
		{
			eval: true
		}
	);
}

export class SolverPool implements Solver {
	private readonly slots: Slot[] = [];
	private readonly queue: Job[] = [];
	private nextId = 1;
	private closed = false;
	readonly size: number;
	private readonly recycleAfter: number;

	constructor(options: PoolOptions = {}) {
		this.size = Math.max(1, options.size ?? availableParallelism());
		this.recycleAfter = options.recycleAfterEntries ?? 1_000_000;
		for (let i = 0; i < this.size; i++) this.slots.push({ worker: this.spawn(), job: null });
	}

	private spawn(): Worker {
		const worker = startWorker();
		worker.unref();
		return worker;
	}

	solve(model: AwardModel, options: SolveOptions, signal?: AbortSignal): Promise<SolveOutcome> {
		if (this.closed) return Promise.reject(new Error('the solver pool is closed'));
		try {
			assertSolvable(model, options);
		} catch (error) {
			return Promise.reject(error as Error);
		}
		if (signal?.aborted) return Promise.reject(new SolveCancelled());
		return new Promise((resolve, reject) => {
			const job: Job = { id: this.nextId++, model, options, resolve, reject, signal };
			signal?.addEventListener('abort', () => this.cancel(job), { once: true });
			this.queue.push(job);
			this.dispatch();
		});
	}

	private dispatch(): void {
		for (const slot of this.slots) {
			if (slot.job || !this.queue.length) continue;
			const job = this.queue.shift()!;
			slot.job = job;
			slot.worker.ref();
			const worker = slot.worker;
			const onMessage = (message: {
				id: number;
				outcome?: SolveOutcome;
				error?: string;
				progress?: SolveProgress;
			}) => {
				if (message.id !== job.id) return;
				if (message.progress) {
					job.options.onProgress?.(message.progress);
					return;
				}
				cleanup();
				slot.job = null;
				const recycle =
					Boolean(message.error) ||
					message.outcome?.status === 'solver_error' ||
					job.model.indices.length >= this.recycleAfter;
				if (recycle) this.replace(slot);
				else worker.unref();
				if (message.error) job.reject(new Error(message.error));
				else job.resolve(message.outcome!);
				this.dispatch();
			};
			const onExit = (code: number) => {
				cleanup();
				if (slot.job === job) {
					slot.job = null;
					job.reject(new Error(`the solver worker stopped unexpectedly (exit code ${code})`));
					this.replace(slot);
					this.dispatch();
				}
			};
			const cleanup = () => {
				worker.off('message', onMessage);
				worker.off('exit', onExit);
			};
			worker.on('message', onMessage);
			worker.on('exit', onExit);
			// Only the numbers cross to the thread: cloning the column and row meanings (hundreds of
			// thousands of small objects) would cost more than the solve.
			const { columns: _columns, rows: _rows, uncovered: _uncovered, ...numbers } = job.model;
			// A callback cannot cross to a thread: the worker is told to report, and the pool calls it.
			const { onProgress, ...options } = job.options;
			worker.postMessage({
				id: job.id,
				model: { ...numbers, columns: [], rows: [], uncovered: [] },
				options,
				reports: Boolean(onProgress)
			});
		}
	}

	private replace(slot: Slot): void {
		const old = slot.worker;
		slot.worker = this.spawn();
		void old.terminate();
	}

	private cancel(job: Job): void {
		const queued = this.queue.indexOf(job);
		if (queued >= 0) {
			this.queue.splice(queued, 1);
			job.reject(new SolveCancelled());
			return;
		}
		const slot = this.slots.find((s) => s.job === job);
		if (!slot) return;
		// Terminating the thread is the only way to stop a running HiGHS call; it also frees its memory.
		slot.job = null;
		slot.worker.removeAllListeners('message');
		slot.worker.removeAllListeners('exit');
		this.replace(slot);
		job.reject(new SolveCancelled());
		this.dispatch();
	}

	async close(): Promise<void> {
		this.closed = true;
		for (const job of this.queue.splice(0)) job.reject(new Error('the solver pool closed'));
		await Promise.all(this.slots.map((s) => s.worker.terminate()));
	}
}
