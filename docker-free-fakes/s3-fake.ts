// The local S3 stand-in: s3rver on loopback, data in S3_FAKE_DIR, the bucket made at start.
// Started by the supervisor in stack.ts; the app reaches it only through @aws-sdk/client-s3.
import { createHash, createHmac, timingSafeEqual } from 'node:crypto';
import { createServer, type IncomingMessage } from 'node:http';
import S3rver from 's3rver';

const port = Number(process.env.S3_FAKE_PORT ?? 9569);
const directory = process.env.S3_FAKE_DIR ?? '.data/s3';
const bucket = process.env.S3_BUCKET ?? 'tenderloom';

const s3rver = new S3rver({
	directory,
	silent: true,
	configureBuckets: [{ name: bucket, configs: [] }]
});

// s3rver serves anonymous requests (list and get of every bid file), and it does not check SigV4
// signatures (its authentication.js verifies only V2). So the fake checks the signature itself and passes
// only requests signed with its key pair, as the app's S3 client sends them; everything else gets 403.
const secrets: Record<string, string> = { S3RVER: 'S3RVER' };
const MAX_CLOCK_SKEW_MS = 15 * 60_000;

const hmac = (key: string | Buffer, data: string) => createHmac('sha256', key).update(data).digest();
const sha256Hex = (data: string) => createHash('sha256').update(data).digest('hex');
const rfc3986 = (value: string) =>
	encodeURIComponent(value).replace(/[!'()*]/g, (c) => `%${c.charCodeAt(0).toString(16).toUpperCase()}`);
const amzDateMs = (value: string) =>
	Date.parse(value.replace(/^(\d{4})(\d\d)(\d\d)T(\d\d)(\d\d)(\d\d)Z$/, '$1-$2-$3T$4:$5:$6Z'));

interface SignedParts {
	credential: string;
	signedHeaders: string;
	signature: string;
	amzDate: string;
	payloadHash: string;
	presigned: boolean;
}

function signedParts(request: IncomingMessage, query: URLSearchParams): SignedParts | null {
	const header = request.headers.authorization;
	if (header) {
		const match =
			/^AWS4-HMAC-SHA256 Credential=([^,]+),\s*SignedHeaders=([^,]+),\s*Signature=([0-9a-f]{64})$/.exec(
				header.trim()
			);
		const amzDate = request.headers['x-amz-date'];
		const payloadHash = request.headers['x-amz-content-sha256'];
		if (!match || typeof amzDate !== 'string' || typeof payloadHash !== 'string') return null;
		return {
			credential: match[1]!,
			signedHeaders: match[2]!,
			signature: match[3]!,
			amzDate,
			payloadHash,
			presigned: false
		};
	}
	if (query.get('X-Amz-Algorithm') !== 'AWS4-HMAC-SHA256') return null;
	const [credential, signedHeaders, signature, amzDate] = [
		'X-Amz-Credential',
		'X-Amz-SignedHeaders',
		'X-Amz-Signature',
		'X-Amz-Date'
	].map((name) => query.get(name));
	if (!credential || !signedHeaders || !signature || !amzDate) return null;
	const payloadHash = query.get('X-Amz-Content-Sha256') ?? 'UNSIGNED-PAYLOAD';
	return { credential, signedHeaders, signature, amzDate, payloadHash, presigned: true };
}

function isSignedByKnownKey(request: IncomingMessage): boolean {
	const rawUrl = request.url ?? '/';
	const [rawPath = '/', rawQuery = ''] = rawUrl.split('?', 2) as [string, string?];
	const query = new URLSearchParams(rawQuery);
	const parts = signedParts(request, query);
	if (!parts) return false;
	const [keyId, date, region, service, terminator] = parts.credential.split('/');
	const secret = keyId ? secrets[keyId] : undefined;
	if (!secret || !date || !region || service !== 's3' || terminator !== 'aws4_request') return false;
	if (!parts.amzDate.startsWith(date)) return false;
	// Presigned URLs carry their own expiry, which s3rver checks; signed headers must be fresh.
	if (!parts.presigned && !(Math.abs(Date.now() - amzDateMs(parts.amzDate)) <= MAX_CLOCK_SKEW_MS))
		return false;

	const canonicalQuery = rawQuery
		.split('&')
		.filter(Boolean)
		.map((pair) => {
			const at = pair.indexOf('=');
			const key = decodeURIComponent(at < 0 ? pair : pair.slice(0, at));
			const value = at < 0 ? '' : decodeURIComponent(pair.slice(at + 1));
			return [rfc3986(key), rfc3986(value)] as const;
		})
		.filter(([key]) => !(parts.presigned && key === 'X-Amz-Signature'))
		.sort(([a, x], [b, y]) => (a < b ? -1 : a > b ? 1 : x < y ? -1 : x > y ? 1 : 0))
		.map(([key, value]) => `${key}=${value}`)
		.join('&');
	const names = parts.signedHeaders.split(';');
	if (!names.includes('host')) return false;
	const canonicalHeaders = names
		.map((name) => {
			const value = request.headers[name];
			const text = Array.isArray(value) ? value.join(',') : (value ?? '');
			return `${name}:${text.trim().replace(/\s+/g, ' ')}\n`;
		})
		.join('');
	const canonicalRequest = [
		request.method,
		rawPath,
		canonicalQuery,
		canonicalHeaders,
		parts.signedHeaders,
		parts.payloadHash
	].join('\n');
	const scope = `${date}/${region}/s3/aws4_request`;
	const stringToSign = ['AWS4-HMAC-SHA256', parts.amzDate, scope, sha256Hex(canonicalRequest)].join('\n');
	const signingKey = ['s3', 'aws4_request'].reduce(
		(key, part) => hmac(key, part),
		hmac(hmac(`AWS4${secret}`, date), region)
	);
	const expected = Buffer.from(hmac(signingKey, stringToSign).toString('hex'));
	const given = Buffer.from(parts.signature);
	return expected.length === given.length && timingSafeEqual(expected, given);
}

const anonymousRefusal = `<?xml version="1.0" encoding="UTF-8"?>
<Error><Code>AccessDenied</Code><Message>Only requests signed with the fake's key pair are served.</Message></Error>`;

await s3rver.configureBuckets();
const handle = s3rver.callback();
const server = createServer((request, response) => {
	if (isSignedByKnownKey(request)) return void handle(request, response);
	response.writeHead(403, { 'content-type': 'application/xml' }).end(anonymousRefusal);
});
await new Promise<void>((resolve, reject) => {
	server.once('error', reject);
	server.listen(port, '127.0.0.1', () => resolve());
});
console.log(`s3 fake listening on 127.0.0.1:${port}, bucket ${bucket}, data in ${directory}`);

const shutdown = () => {
	server.close((error) => process.exit(error ? 1 : 0));
	server.closeAllConnections();
};
process.on('SIGTERM', shutdown);
process.on('SIGINT', shutdown);
// the supervisor holds our stdin; when it goes away, so do we
process.stdin.on('close', shutdown);
process.stdin.resume();
