// One bid upload through the service in a process of its own, so a test can kill it (kill -9) half-way,
// as a crash of the web process would, without stopping the web server other tests use.
// Usage: node --import tsx tests/support/upload-in-process.ts '<SessionUser as JSON>' <event id> <file>
import { readFileSync } from 'node:fs';
import { basename } from 'node:path';
import { submitUpload } from '../../src/lib/server/services/bids';

const [actor, eventId, path] = process.argv.slice(2) as [string, string, string];
const outcome = await submitUpload(
	JSON.parse(actor),
	eventId,
	{ name: basename(path), bytes: readFileSync(path) },
	{ origin: process.env.ORIGIN ?? 'http://127.0.0.1', ip: null }
);
console.log(JSON.stringify({ ok: outcome.ok }));
process.exit(0);
