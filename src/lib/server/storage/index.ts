import {
	DeleteObjectCommand,
	GetObjectCommand,
	HeadBucketCommand,
	ListObjectsV2Command,
	PutObjectCommand,
	S3Client
} from '@aws-sdk/client-s3';
import { config } from '../config';

// Files (bid sheets, uploads, exports) live in an S3-compatible store. Endpoint and keys come from the
// environment: the local fake in development and tests, any S3-compatible service in production.
let client: S3Client | undefined;

export function s3(): S3Client {
	if (client) return client;
	const settings = config();
	client = new S3Client({
		region: settings.S3_REGION,
		endpoint: settings.S3_ENDPOINT,
		forcePathStyle: settings.S3_FORCE_PATH_STYLE === 'true',
		credentials:
			settings.S3_ACCESS_KEY_ID && settings.S3_SECRET_ACCESS_KEY
				? { accessKeyId: settings.S3_ACCESS_KEY_ID, secretAccessKey: settings.S3_SECRET_ACCESS_KEY }
				: undefined
	});
	return client;
}

export const bucket = () => config().S3_BUCKET;

export async function putObject(
	key: string,
	body: Buffer,
	contentType: string,
	metadata: Record<string, string> = {}
): Promise<void> {
	await s3().send(
		new PutObjectCommand({
			Bucket: bucket(),
			Key: key,
			Body: body,
			ContentType: contentType,
			Metadata: metadata
		})
	);
}

export async function getObject(key: string): Promise<Buffer> {
	const result = await s3().send(new GetObjectCommand({ Bucket: bucket(), Key: key }));
	if (!result.Body) throw new Error(`object ${key} has no body`);
	return Buffer.from(await result.Body.transformToByteArray());
}

export async function deleteObject(key: string): Promise<void> {
	await s3().send(new DeleteObjectCommand({ Bucket: bucket(), Key: key }));
}

/** Every key under a prefix, in the store's (lexical) order. */
export async function listKeys(prefix: string): Promise<string[]> {
	const keys: string[] = [];
	let token: string | undefined;
	do {
		const page = await s3().send(
			new ListObjectsV2Command({ Bucket: bucket(), Prefix: prefix, ContinuationToken: token })
		);
		keys.push(...(page.Contents ?? []).flatMap((o) => (o.Key ? [o.Key] : [])));
		token = page.IsTruncated ? page.NextContinuationToken : undefined;
	} while (token);
	return keys;
}

/** Every object under a prefix with when it was last written, in the store's (lexical) order. */
export async function listObjects(prefix: string): Promise<{ key: string; lastModified: Date | null }[]> {
	const objects: { key: string; lastModified: Date | null }[] = [];
	let token: string | undefined;
	do {
		const page = await s3().send(
			new ListObjectsV2Command({ Bucket: bucket(), Prefix: prefix, ContinuationToken: token })
		);
		for (const o of page.Contents ?? [])
			if (o.Key) objects.push({ key: o.Key, lastModified: o.LastModified ?? null });
		token = page.IsTruncated ? page.NextContinuationToken : undefined;
	} while (token);
	return objects;
}

/** Whether the bucket can be reached with the configured keys. */
export async function storageReachable(): Promise<boolean> {
	try {
		await s3().send(new HeadBucketCommand({ Bucket: bucket() }));
		return true;
	} catch {
		return false;
	}
}
