// Reads an uploaded file (a supplier's bid sheet, a buyer's item list) on a worker thread with a memory
// cap and a time limit, at most a few at a time per process, so the web server keeps answering (the
// health check included) while a hostile or a large file is checked.
//
// Where the thread's code comes from: Vite bundles `new Worker(new URL('./x.ts', import.meta.url))`
// for the browser only (its worker plugin applies to the client environment), so in the SSR build such
// a URL would name a .ts file Node cannot run. Instead parse-worker.ts is only ever imported
// dynamically, which makes it a chunk of its own in build/server/chunks, and it exports its own
// import.meta.url: the thread is started from that chunk, with the same module graph the server uses.
// From the TypeScript sources (vite dev, vitest, tsx) the thread registers tsx's loader first, as the
// award engine's pool does. tests/integration/hostile-uploads.spec.ts runs this through the built server.
import { createRequire } from 'node:module';
import { pathToFileURL } from 'node:url';
import { Worker } from 'node:worker_threads';
import type { SheetEvent, SheetProblem } from './bid-sheet';
import type { ItemFileOutcome } from './item-import';
import type { BidFileReading, ParseJob } from './parse-worker';

const positive = (value: string | undefined, fallback: number) =>
	Number.isFinite(Number(value)) && Number(value) > 0 ? Number(value) : fallback;

export const PARSE_LIMITS = {
	heapMb: positive(process.env.UPLOAD_PARSE_HEAP_MB, 256),
	timeoutMs: positive(process.env.UPLOAD_PARSE_TIMEOUT_MS, 20_000),
	concurrent: positive(process.env.UPLOAD_PARSE_CONCURRENCY, 2)
};

let running = 0;
const waiting: (() => void)[] = [];

async function slot(concurrent: number): Promise<() => void> {
	if (running >= concurrent) await new Promise<void>((resolve) => waiting.push(resolve));
	running++;
	return () => {
		running--;
		waiting.shift()?.();
	};
}

/** How many threads this process has started for bid files (read by the tests of the pool). */
export const parseThreadCount = { started: 0 };

function startThread(entryUrl: string, task: string, heapMb: number): Worker {
	parseThreadCount.started++;
	const options = {
		workerData: { task },
		resourceLimits: { maxOldGenerationSizeMb: heapMb, maxYoungGenerationSizeMb: Math.min(64, heapMb / 4) }
	};
	if (!entryUrl.endsWith('.ts')) return new Worker(new URL(entryUrl), options);
	const tsx = pathToFileURL(
		createRequire(import.meta.url)
			.resolve('tsx/esm/api')
			.replace(/\.cjs$/, '.mjs')
	).href;
	return new Worker(
		`import(${JSON.stringify(tsx)}).then((m) => { m.register(); return import(${JSON.stringify(entryUrl)}); });`,
		{ ...options, eval: true }
	);
}

// A few threads are kept started and idle, so an upload does not wait for a thread to load the
// spreadsheet library (about a second on a busy machine; with 40 uploads at once, starting a thread per
// file was most of an upload's time). A thread that read a file and answered goes back to the idle ones
// and reads the next file with the same memory cap and its own time limit; a thread that timed out, ran
// out of memory or failed is stopped. After REUSES files a thread is replaced anyway, so nothing one
// file left behind in a thread lives long.
const REUSES = 200;
interface PooledThread {
	worker: Worker;
	files: number;
}
const idle: PooledThread[] = [];

function startPooled(entryUrl: string, task: string): PooledThread {
	const worker = startThread(entryUrl, task, PARSE_LIMITS.heapMb);
	worker.unref();
	const pooled = { worker, files: 0 };
	const forget = () => {
		const at = idle.indexOf(pooled);
		if (at >= 0) idle.splice(at, 1);
	};
	worker.on('error', forget);
	worker.on('exit', forget);
	return pooled;
}

function prepareIdle(entryUrl: string, task: string): void {
	while (idle.length < Math.max(1, PARSE_LIMITS.concurrent - running)) idle.push(startPooled(entryUrl, task));
}

/**
 * A thread for one file: an idle one under the usual limits, or a fresh one (stopped afterwards) when a
 * caller asks for another memory cap or time limit (the tests of those limits).
 */
function takeThread(
	entryUrl: string,
	task: string,
	limits: { heapMb: number; timeoutMs: number }
): PooledThread | Worker {
	if (limits.heapMb !== PARSE_LIMITS.heapMb || limits.timeoutMs !== PARSE_LIMITS.timeoutMs)
		return startThread(entryUrl, task, limits.heapMb);
	const pooled = idle.pop() ?? startPooled(entryUrl, task);
	pooled.worker.ref();
	return pooled;
}

/** Back to the idle threads after a file it read and answered, unless it has read enough files. */
function giveBack(pooled: PooledThread): void {
	pooled.files++;
	pooled.worker.unref();
	if (pooled.files >= REUSES || idle.length >= PARSE_LIMITS.concurrent) void pooled.worker.terminate();
	else idle.push(pooled);
}

// In the built server, start the idle threads as soon as the upload code is loaded.
if (!import.meta.url.endsWith('.ts'))
	void import('./parse-worker').then(({ entryUrl, PARSE_TASK }) => prepareIdle(entryUrl, PARSE_TASK));

const fileProblem = (message: string): SheetProblem => ({
	sheet: '(file)',
	row: null,
	column: null,
	message
});

/** A supplier's bid sheet for the event. */
export function readBidFile(
	event: SheetEvent,
	file: { name: string; bytes: Buffer },
	limits: Partial<typeof PARSE_LIMITS> = {}
): Promise<BidFileReading> {
	return readOnThread<BidFileReading>(
		{ kind: 'bid', event, fileName: file.name, bytes: new Uint8Array(file.bytes) },
		(message) => ({ kind: null, outcome: { ok: false, problems: [fileProblem(message)] } }),
		limits
	);
}

/** A buyer's item list for an event (sheets/item-import.ts). */
export function readItemFile(
	file: { name: string; bytes: Buffer },
	limits: Partial<typeof PARSE_LIMITS> = {}
): Promise<ItemFileOutcome> {
	return readOnThread<ItemFileOutcome>(
		{ kind: 'items', fileName: file.name, bytes: new Uint8Array(file.bytes) },
		(message) => ({ ok: false, problems: [fileProblem(message)] }),
		limits
	);
}

/** `refused`: the answer for a file the thread could not read (out of time or memory, or it failed). */
async function readOnThread<T>(
	job: ParseJob,
	refused: (message: string) => T,
	limits: Partial<typeof PARSE_LIMITS>
): Promise<T> {
	const { heapMb, timeoutMs, concurrent } = { ...PARSE_LIMITS, ...limits };
	const { entryUrl, PARSE_TASK } = await import('./parse-worker');
	const what = job.kind === 'bid' ? 'a bid sheet' : 'an item list';
	const advice =
		job.kind === 'bid'
			? 'Upload the bid sheet downloaded for this event, with your prices typed in.'
			: 'Save the item list as .xlsx or as CSV UTF-8 (comma delimited), one row per item, and import it again.';
	const release = await slot(concurrent);
	try {
		return await new Promise<T>((resolve) => {
			const taken = takeThread(entryUrl, PARSE_TASK, { heapMb, timeoutMs });
			const thread = taken instanceof Worker ? taken : taken.worker;
			let settled = false;
			const settle = (reading: T, answered = false) => {
				if (settled) return;
				settled = true;
				clearTimeout(timer);
				thread.off('message', onMessage);
				thread.off('error', onError);
				thread.off('exit', onExit);
				if (answered && !(taken instanceof Worker)) giveBack(taken);
				else void thread.terminate();
				resolve(reading);
			};
			const timer = setTimeout(
				() =>
					settle(
						refused(
							`The file could not be read in time (${Math.round(timeoutMs / 1000)} seconds); ${what} takes well under that. ${advice}`
						)
					),
				timeoutMs
			);
			const onMessage = (reading: T) => settle(reading, true);
			const onError = (error: Error & { code?: string }) => {
				if (error.code !== 'ERR_WORKER_OUT_OF_MEMORY')
					console.error(
						JSON.stringify({ level: 'error', message: 'bid file thread failed', error: String(error) })
					);
				settle(
					refused(
						error.code === 'ERR_WORKER_OUT_OF_MEMORY'
							? `The file needs more memory to read than ${what} may use (${heapMb} MB). ${advice}`
							: job.kind === 'bid'
								? 'The file could not be read. Save the bid sheet as .xlsx or as CSV UTF-8 (comma delimited) and upload it again.'
								: `The file could not be read. ${advice}`
					)
				);
			};
			// A message posted just before the thread ends is delivered before 'exit'; wait a turn anyway.
			const onExit = () =>
				setImmediate(() =>
					settle(
						refused(
							job.kind === 'bid'
								? 'The file could not be read. Save the bid sheet as .xlsx again and upload it.'
								: `The file could not be read. ${advice}`
						)
					)
				);
			thread.once('message', onMessage);
			thread.once('error', onError);
			thread.once('exit', onExit);
			thread.postMessage(job);
		});
	} finally {
		release();
		prepareIdle(entryUrl, PARSE_TASK);
	}
}
