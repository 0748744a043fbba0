// The entry of a thread that reads uploaded files, one at a time (a supplier's bid sheet, or a buyer's item
// list): the content checks of inspect.ts (size, zip entries, sheet shape, CSV lines) and then the parse,
// so that a hostile file costs a thread with a memory cap, never the web server's event loop. Started by read-bid-file.ts; the module also runs on
// the main thread when read-bid-file.ts imports it for its URL, and then does nothing.
import { isMainThread, parentPort, workerData } from 'node:worker_threads';
import { parseBidCsv, parseBidWorkbook, type ParseOutcome, type SheetEvent } from './bid-sheet';
import { bidSheetShape, inspectUpload } from './inspect';
import { parseItemCsv, parseItemWorkbook, type ItemFileOutcome } from './item-import';

export const PARSE_TASK = 'tenderloom:read-bid-file';

/** The URL of this module as it exists at run time: the .ts source, or the server build's chunk. */
export const entryUrl = import.meta.url;

export interface BidFileReading {
	kind: 'xlsx' | 'csv' | null;
	outcome: ParseOutcome;
}

export type ParseJob =
	| { kind: 'bid'; event: SheetEvent; fileName: string; bytes: Uint8Array }
	| { kind: 'items'; fileName: string; bytes: Uint8Array };

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

/** A buyer's item list (.xlsx or .csv), checked by its content first like a bid file. */
export async function readItemFileHere(fileName: string, bytes: Buffer): Promise<ItemFileOutcome> {
	const inspection = await inspectUpload(bytes, fileName);
	if (!inspection.ok) return { ok: false, problems: [fileProblem(inspection.message)] };
	return inspection.kind === 'xlsx' ? parseItemWorkbook(inspection.bytes) : parseItemCsv(inspection.text);
}

// A thread is started ahead of need and reads one file at a time (read-bid-file.ts sends the next only
// after the answer); a file that fails to read ends the thread (an unhandled rejection).
if (!isMainThread && (workerData as { task?: string } | null)?.task === PARSE_TASK) {
	parentPort!.on('message', (job: ParseJob) => {
		const bytes = Buffer.from(job.bytes.buffer, job.bytes.byteOffset, job.bytes.byteLength);
		const reading =
			job.kind === 'bid'
				? readBidFileHere(job.event, job.fileName, bytes)
				: readItemFileHere(job.fileName, bytes);
		void reading.then((answer) => parentPort!.postMessage(answer));
	});
}
