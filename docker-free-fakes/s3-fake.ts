// The local S3 stand-in: s3rver on loopback, data in S3_FAKE_DIR, the bucket made at start.
// Started by the supervisor in stack.ts; the app reaches it only through @aws-sdk/client-s3.
import S3rver from 's3rver';

const port = Number(process.env.S3_FAKE_PORT ?? 9569);
const directory = process.env.S3_FAKE_DIR ?? '.data/s3';
const bucket = process.env.S3_BUCKET ?? 'tenderloom';

const server = new S3rver({
	address: '127.0.0.1',
	port,
	directory,
	silent: true,
	configureBuckets: [{ name: bucket, configs: [] }]
});

await server.run();
console.log(`s3 fake listening on 127.0.0.1:${port}, bucket ${bucket}, data in ${directory}`);

const shutdown = () => {
	server.close().then(
		() => process.exit(0),
		() => process.exit(1)
	);
};
process.on('SIGTERM', shutdown);
process.on('SIGINT', shutdown);
// the supervisor holds our stdin; when it goes away, so do we
process.stdin.on('close', shutdown);
process.stdin.resume();
