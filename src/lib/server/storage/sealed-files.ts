// What protects a bid file until the opening. At rest: AES-256-GCM with a fresh data key per file, the
// data key wrapped by a master key from BID_FILE_KEYS, whose id travels in the object's header so a file
// stays readable after the active key changes (add the new key first, re-wrap, then retire the old one:
// scripts/rotate-bid-file-keys.ts). In the trail: a commitment, SHA-256 over a random salt and the file
// bytes; the salt stays sealed until the opening, so nobody can test guessed prices against it before.
import { createCipheriv, createDecipheriv, createHash, randomBytes, timingSafeEqual } from 'node:crypto';
import { PutObjectCommand } from '@aws-sdk/client-s3';
import { config } from '../config';
import { bucket, getObject, s3 } from './index';

export interface BidFileKeys {
	active: { id: string; key: Buffer };
	byId: Map<string, Buffer>;
}

export const BID_FILE_KEYS_HELP =
	'BID_FILE_KEYS lists master keys as id:base64, the active one first, each 32 random bytes (openssl rand -base64 32), such as "k2:…,k1:…"';

/** Parses BID_FILE_KEYS ("k2:base64,k1:base64"); throws with what is wrong. */
export function parseBidFileKeys(setting: string): BidFileKeys {
	const byId = new Map<string, Buffer>();
	const order: string[] = [];
	for (const part of setting.split(',').map((p) => p.trim())) {
		const match = /^([A-Za-z0-9_-]{1,32}):([A-Za-z0-9+/]{43}=)$/.exec(part);
		const key = match ? Buffer.from(match[2]!, 'base64') : undefined;
		if (!match || key?.length !== 32) throw new Error(BID_FILE_KEYS_HELP);
		if (byId.has(match[1]!)) throw new Error(`BID_FILE_KEYS names the key ${match[1]} twice`);
		byId.set(match[1]!, key);
		order.push(match[1]!);
	}
	return { active: { id: order[0]!, key: byId.get(order[0]!)! }, byId };
}

// Header: magic, key id length and id, then the wrapped data key (iv, tag, 32 bytes) and the data's iv
// and tag; the ciphertext follows. Both encryptions are bound to the storage key, so an object copied
// over another supplier's key does not open.
const MAGIC = Buffer.from('TLBF1', 'latin1');
const IV = 12;
const TAG = 16;
const DATA_KEY = 32;

const wrapContext = (keyId: string, storageKey: string) =>
	Buffer.from(`tenderloom bid file key\n${keyId}\n${storageKey}`);
const dataContext = (storageKey: string) => Buffer.from(`tenderloom bid file\n${storageKey}`);

function gcmEncrypt(key: Buffer, plain: Buffer, aad: Buffer) {
	const iv = randomBytes(IV);
	const cipher = createCipheriv('aes-256-gcm', key, iv).setAAD(aad);
	const body = Buffer.concat([cipher.update(plain), cipher.final()]);
	return { iv, tag: cipher.getAuthTag(), body };
}

function gcmDecrypt(key: Buffer, iv: Buffer, tag: Buffer, body: Buffer, aad: Buffer): Buffer {
	const decipher = createDecipheriv('aes-256-gcm', key, iv).setAAD(aad);
	decipher.setAuthTag(tag);
	return Buffer.concat([decipher.update(body), decipher.final()]);
}

export const isSealedFile = (bytes: Buffer) =>
	bytes.length > MAGIC.length && bytes.subarray(0, MAGIC.length).equals(MAGIC);

interface Envelope {
	keyId: string;
	wrapped: { iv: Buffer; tag: Buffer; body: Buffer };
	data: { iv: Buffer; tag: Buffer; body: Buffer };
}

function readEnvelope(sealed: Buffer): Envelope {
	if (!isSealedFile(sealed)) throw new Error('not a sealed bid file');
	let at = MAGIC.length;
	const take = (n: number) => {
		if (at + n > sealed.length) throw new Error('sealed bid file is truncated');
		const part = sealed.subarray(at, at + n);
		at += n;
		return part;
	};
	const keyId = take(take(1)[0]!).toString('latin1');
	const wrapped = { iv: take(IV), tag: take(TAG), body: take(DATA_KEY) };
	const data = { iv: take(IV), tag: take(TAG), body: sealed.subarray(at) };
	return { keyId, wrapped, data };
}

function writeEnvelope(envelope: Envelope): Buffer {
	const id = Buffer.from(envelope.keyId, 'latin1');
	return Buffer.concat([
		MAGIC,
		Buffer.from([id.length]),
		id,
		envelope.wrapped.iv,
		envelope.wrapped.tag,
		envelope.wrapped.body,
		envelope.data.iv,
		envelope.data.tag,
		envelope.data.body
	]);
}

/** The file encrypted under a fresh data key, wrapped by the active master key. */
export function sealFile(plain: Buffer, storageKey: string, keys: BidFileKeys): Buffer {
	const dataKey = randomBytes(DATA_KEY);
	const data = gcmEncrypt(dataKey, plain, dataContext(storageKey));
	const wrapped = gcmEncrypt(keys.active.key, dataKey, wrapContext(keys.active.id, storageKey));
	return writeEnvelope({ keyId: keys.active.id, wrapped, data });
}

function unwrapDataKey(envelope: Envelope, storageKey: string, keys: BidFileKeys): Buffer {
	const master = keys.byId.get(envelope.keyId);
	if (!master)
		throw new Error(
			`the bid file is sealed with the master key ${envelope.keyId}, which BID_FILE_KEYS lacks`
		);
	const { iv, tag, body } = envelope.wrapped;
	return gcmDecrypt(master, iv, tag, body, wrapContext(envelope.keyId, storageKey));
}

/** The plain file; throws if any byte of it or its header was changed, or its master key is missing. */
export function openSealedFile(sealed: Buffer, storageKey: string, keys: BidFileKeys): Buffer {
	const envelope = readEnvelope(sealed);
	const { iv, tag, body } = envelope.data;
	return gcmDecrypt(unwrapDataKey(envelope, storageKey, keys), iv, tag, body, dataContext(storageKey));
}

export const sealedKeyId = (sealed: Buffer) => readEnvelope(sealed).keyId;

/** The same file with its data key wrapped by the active master key; the ciphertext is unchanged. */
export function rewrapSealedFile(sealed: Buffer, storageKey: string, keys: BidFileKeys): Buffer {
	const envelope = readEnvelope(sealed);
	if (envelope.keyId === keys.active.id) return sealed;
	const dataKey = unwrapDataKey(envelope, storageKey, keys);
	const wrapped = gcmEncrypt(keys.active.key, dataKey, wrapContext(keys.active.id, storageKey));
	return writeEnvelope({ ...envelope, keyId: keys.active.id, wrapped });
}

export const COMMITMENT_SCHEME = 'SHA-256 over salt || file bytes (salt: 32 bytes, shown in hex)';

/** SHA-256 over salt || file bytes, both hex. */
export function commitToFile(bytes: Buffer, salt: Buffer = randomBytes(32)) {
	return {
		salt: salt.toString('hex'),
		commitment: createHash('sha256').update(salt).update(bytes).digest('hex')
	};
}

/** Whether a commitment from the trail matches a file, given the salt revealed at the opening. */
export function verifyCommitment(bytes: Buffer, saltHex: string, commitmentHex: string): boolean {
	if (!/^[0-9a-f]{64}$/i.test(saltHex) || !/^[0-9a-f]{64}$/i.test(commitmentHex)) return false;
	const expected = Buffer.from(commitToFile(bytes, Buffer.from(saltHex, 'hex')).commitment, 'hex');
	return timingSafeEqual(expected, Buffer.from(commitmentHex, 'hex'));
}

let cachedKeys: { setting: string; keys: BidFileKeys } | undefined;

export function bidFileKeys(): BidFileKeys {
	const setting = config().BID_FILE_KEYS;
	if (cachedKeys?.setting !== setting) cachedKeys = { setting, keys: parseBidFileKeys(setting) };
	return cachedKeys.keys;
}

/** Stores a bid file sealed; against a real S3, server-side encryption is requested on top when set. */
export async function putSealedObject(storageKey: string, sealed: Buffer): Promise<void> {
	const encryption = config().S3_SERVER_SIDE_ENCRYPTION;
	await s3().send(
		new PutObjectCommand({
			Bucket: bucket(),
			Key: storageKey,
			Body: sealed,
			ContentType: 'application/octet-stream',
			Metadata: { 'bid-file-key': sealedKeyId(sealed) },
			...(encryption === 'off' ? {} : { ServerSideEncryption: encryption })
		})
	);
}

export async function putBidFile(storageKey: string, plain: Buffer): Promise<void> {
	await putSealedObject(storageKey, sealFile(plain, storageKey, bidFileKeys()));
}

/** A bid file as uploaded. A plain object is refused: storage access must not be able to plant one. */
export async function getBidFile(storageKey: string): Promise<Buffer> {
	return openSealedFile(await getObject(storageKey), storageKey, bidFileKeys());
}

export type RewrapOutcome = 're-wrapped' | 'current' | 'sealed' | 'plain';

/**
 * Brings one stored bid file under the active master key. A plain object (stored before bid files were
 * encrypted) is sealed only when asked, since storage access alone could have planted it.
 */
export async function rewrapStoredBidFile(storageKey: string, sealPlain: boolean): Promise<RewrapOutcome> {
	const keys = bidFileKeys();
	const stored = await getObject(storageKey);
	if (!isSealedFile(stored)) {
		if (!sealPlain) return 'plain';
		await putSealedObject(storageKey, sealFile(stored, storageKey, keys));
		return 'sealed';
	}
	if (sealedKeyId(stored) === keys.active.id) return 'current';
	await putSealedObject(storageKey, rewrapSealedFile(stored, storageKey, keys));
	return 're-wrapped';
}
