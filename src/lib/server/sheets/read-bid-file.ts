// Reads an uploaded bid file on a worker thread with a memory cap and a time limit, at most a few at a
// time per process, so the web server keeps answering (the health check included) while a hostile
// file is checked.
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
import type { SheetEvent } from './bid-sheet';
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

function startThread(entryUrl: string, task: string, heapMb: number): Worker {
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

// One thread is kept started and idle, so an upload does not wait for a thread to load the spreadsheet
// library (about a second on a busy machine); it is replaced after each file.
let spare: Worker | null = null;

function prepareSpare(entryUrl: string, task: string): void {
	if (spare) return;
	const thread = startThread(entryUrl, task, PARSE_LIMITS.heapMb);
	thread.unref();
	const forget = () => {
		if (spare === thread) spare = null;
	};
	thread.once('error', forget);
	thread.once('exit', forget);
	spare = thread;
}

function takeThread(entryUrl: string, task: string, heapMb: number): Worker {
	const thread = spare && heapMb === PARSE_LIMITS.heapMb ? spare : startThread(entryUrl, task, heapMb);
	if (thread === spare) spare = null;
	thread.ref();
	return thread;
}

// In the built server, start the first spare thread as soon as the upload code is loaded.
if (!import.meta.url.endsWith('.ts'))
	void import('./parse-worker').then(({ entryUrl, PARSE_TASK }) => prepareSpare(entryUrl, PARSE_TASK));

const refused = (message: string): BidFileReading => ({
	kind: null,
	outcome: { ok: false, problems: [{ sheet: '(file)', row: null, column: null, message }] }
});

export async function readBidFile(
	event: SheetEvent,
	file: { name: string; bytes: Buffer },
	limits: Partial<typeof PARSE_LIMITS> = {}
): Promise<BidFileReading> {
	const { heapMb, timeoutMs, concurrent } = { ...PARSE_LIMITS, ...limits };
	const { entryUrl, PARSE_TASK } = await import('./parse-worker');
	const release = await slot(concurrent);
	try {
		return await new Promise<BidFileReading>((resolve) => {
			const thread = takeThread(entryUrl, PARSE_TASK, heapMb);
			const job: ParseJob = { event, fileName: file.name, bytes: new Uint8Array(file.bytes) };
			thread.postMessage(job);
			let settled = false;
			const settle = (reading: BidFileReading) => {
				if (settled) return;
				settled = true;
				clearTimeout(timer);
				void thread.terminate();
				resolve(reading);
			};
			const timer = setTimeout(
				() =>
					settle(
						refused(
							`The file could not be read in time (${Math.round(timeoutMs / 1000)} seconds); a bid sheet takes well under that. Upload the bid sheet downloaded for this event, with your prices typed in.`
						)
					),
				timeoutMs
			);
			thread.once('message', (reading: BidFileReading) => settle(reading));
			thread.once('error', (error: Error & { code?: string }) => {
				if (error.code !== 'ERR_WORKER_OUT_OF_MEMORY')
					console.error(
						JSON.stringify({ level: 'error', message: 'bid file thread failed', error: String(error) })
					);
				settle(
					refused(
						error.code === 'ERR_WORKER_OUT_OF_MEMORY'
							? `The file needs more memory to read than a bid sheet may use (${heapMb} MB). Upload the bid sheet downloaded for this event, with your prices typed in.`
							: 'The file could not be read. Save the bid sheet as .xlsx or as CSV UTF-8 (comma delimited) and upload it again.'
					)
				);
			});
			// A message posted just before the thread ends is delivered before 'exit'; wait a turn anyway.
			thread.once('exit', () =>
				setImmediate(() =>
					settle(refused('The file could not be read. Save the bid sheet as .xlsx again and upload it.'))
				)
			);
		});
	} finally {
		release();
		prepareSpare(entryUrl, PARSE_TASK);
	}
}
