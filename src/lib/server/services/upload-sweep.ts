// What a dead upload request leaves behind, removed (services/bids.ts submitUpload records an upload as
// "receiving" before its file is stored): rows still receiving after a few minutes are refused and their
// objects deleted; objects whose key has no row (an event deleted with its uploads, or a file stored
// before uploads were recorded first) or a refused row are deleted. The worker runs it every minute
// (src/worker.ts); any number of processes may run it at once.
import { now } from '../clock';
import { refuseAbandonedUploads, uploadStatusByKey } from '../db/bids';
import { db } from '../db/knex';
import { deleteObject, listObjects } from '../storage';

/** How long an upload may stay "receiving": far longer than storing and reading a 5 MB sheet takes. */
export const UPLOAD_RECEIVING_GRACE_SECONDS = 5 * 60;

export interface UploadSweep {
	/** Uploads refused because their request died while receiving. */
	abandoned: number;
	/** Objects deleted: of abandoned or refused uploads, or with no upload at all. */
	deleted: string[];
}

export async function sweepUploadOrphans(options: { graceSeconds?: number } = {}): Promise<UploadSweep> {
	const grace = (options.graceSeconds ?? UPLOAD_RECEIVING_GRACE_SECONDS) * 1000;
	const before = new Date(now().getTime() - grace);
	const abandoned = await refuseAbandonedUploads(db(), before);
	// Listed after the rows were read would race a new upload; listed first, every object already has
	// its row (the row is committed before the file is put), unless it is an orphan.
	const objects = await listObjects('uploads/');
	const status = await uploadStatusByKey(
		db(),
		objects.map((o) => o.key)
	);
	const doomed = new Set(abandoned);
	for (const object of objects) {
		const of = status.get(object.key);
		// An object with no row is left alone for the grace period too, in case an older web process, which
		// stored the file first, is still about to record it.
		if (of === 'refused' || (of === undefined && (object.lastModified?.getTime() ?? 0) < before.getTime()))
			doomed.add(object.key);
	}
	const deleted: string[] = [];
	for (const key of doomed) {
		await deleteObject(key);
		deleted.push(key);
	}
	return { abandoned: abandoned.length, deleted };
}
