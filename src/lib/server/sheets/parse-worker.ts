// The entry of a thread that reads uploaded bid files, one at a time: the content checks of inspect.ts (size,
// zip entries, sheet shape, CSV lines) and then the parse, so that a hostile file costs a thread with a
// memory cap, never the web server's event loop. Started by read-bid-file.ts; the module also runs on
// the main thread when read-bid-file.ts imports it for its URL, and then does nothing.
import { isMainThread, parentPort, workerData } from 'node:worker_threads';
import { parseBidCsv, parseBidWorkbook, type ParseOutcome, type SheetEvent } from './bid-sheet';
import { bidSheetShape, inspectUpload } from './inspect';

export const PARSE_TASK = 'tenderloom:read-bid-file';

/** The URL of this module as it exists at run time: the .ts source, or the server build's chunk. */
export const entryUrl = import.meta.url;

export interface BidFileReading {
	kind: 'xlsx' | 'csv' | null;
	outcome: ParseOutcome;
}

export interface ParseJob {
	event: SheetEvent;
	fileName: string;
	bytes: Uint8Array;
}

export const fileProblem = (message: string) => ({ sheet: '(file)', row: null, column: null, message });

export async function readBidFileHere(
	event: SheetEvent,
	fileName: string,
	bytes: Buffer
): Promise<BidFileReading> {
	const inspection = await inspectUpload(bytes, fileName, bidSheetShape(event.items.length));
	if (!inspection.ok)
		return { kind: null, outcome: { ok: false, problems: [fileProblem(inspection.message)] } };
	return {
		kind: inspection.kind,
		outcome:
			inspection.kind === 'xlsx'
				? await parseBidWorkbook(event, inspection.bytes)
				: parseBidCsv(event, inspection.text)
	};
}

// A thread is started ahead of need and reads one file at a time (read-bid-file.ts sends the next only
// after the answer); a file that fails to read ends the thread (an unhandled rejection).
if (!isMainThread && (workerData as { task?: string } | null)?.task === PARSE_TASK) {
	parentPort!.on('message', (job: ParseJob) => {
		const bytes = Buffer.from(job.bytes.buffer, job.bytes.byteOffset, job.bytes.byteLength);
		void readBidFileHere(job.event, job.fileName, bytes).then((reading) => parentPort!.postMessage(reading));
	});
}
