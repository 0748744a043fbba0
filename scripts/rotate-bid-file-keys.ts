// Re-wraps the data key of every stored bid file under the active master key, the first of
// BID_FILE_KEYS. Rotating: (1) put the new key first and keep the old one after it, such as
// BID_FILE_KEYS="k2:…,k1:…", and restart the web and worker processes, so new files use k2 and old ones
// still open; (2) run `npm run bid-files:rotate-keys`; (3) once it reports nothing left to re-wrap, drop
// k1 from BID_FILE_KEYS and restart. The file contents are not re-encrypted, only their data keys.
// Options: --event <id> limits the run to one event; --seal-plain also encrypts files stored before bid
// files were encrypted (check first that nobody could write to the bucket since).
import { parseArgs } from 'node:util';
import { listUploadStorageKeys } from '../src/lib/server/db/bids';
import { closeDb, db } from '../src/lib/server/db/knex';
import { bidFileKeys, rewrapStoredBidFile, type RewrapOutcome } from '../src/lib/server/storage/sealed-files';

const { values } = parseArgs({
	options: { event: { type: 'string' }, 'seal-plain': { type: 'boolean', default: false } }
});

const active = bidFileKeys().active.id;
const storageKeys = await listUploadStorageKeys(db(), values.event);
const counts: Record<RewrapOutcome | 'failed', number> = {
	're-wrapped': 0,
	current: 0,
	sealed: 0,
	plain: 0,
	failed: 0
};
for (const key of storageKeys) {
	try {
		counts[await rewrapStoredBidFile(key, values['seal-plain'])] += 1;
	} catch (error) {
		counts.failed += 1;
		console.error(`${key}: ${error instanceof Error ? error.message : String(error)}`);
	}
}
await closeDb();
console.log(
	`${storageKeys.length} bid files: ${counts['re-wrapped']} re-wrapped, ${counts.current} already under ${active}, ` +
		`${counts.sealed} sealed (were plain), ${counts.plain} plain left (use --seal-plain), ${counts.failed} failed`
);
if (counts.failed || counts.plain) {
	console.log('Keep the old keys in BID_FILE_KEYS until a run reports no failed and no plain files.');
	process.exitCode = counts.failed ? 1 : 0;
}
