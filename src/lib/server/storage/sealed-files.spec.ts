import { randomBytes } from 'node:crypto';
import { describe, expect, it } from 'vitest';
import {
	commitToFile,
	openSealedFile,
	parseBidFileKeys,
	rewrapSealedFile,
	sealFile,
	sealedKeyId,
	verifyCommitment
} from './sealed-files';

const aKey = (id: string) => `${id}:${randomBytes(32).toString('base64')}`;
const k1 = aKey('k1');
const k2 = aKey('k2');
const file = Buffer.from('Ref,Description,Lot,Unit,Quantity,Unit price\r\nIT-1,Bolts,L1,C62,100,4.37\r\n');
const where = 'uploads/event/supplier/0f6b';

describe('master keys from BID_FILE_KEYS', () => {
	it('takes the first key as the active one and keeps the others to open older files', () => {
		const keys = parseBidFileKeys(`${k2},${k1}`);
		expect(keys.active.id).toBe('k2');
		expect([...keys.byId.keys()]).toEqual(['k2', 'k1']);
	});

	it('refuses a key that is not 32 bytes, a missing id and an id named twice', () => {
		expect(() => parseBidFileKeys(`k1:${randomBytes(16).toString('base64')}`)).toThrow(/32 random bytes/);
		expect(() => parseBidFileKeys(randomBytes(32).toString('base64'))).toThrow(/id:base64/);
		expect(() => parseBidFileKeys(`${k1},${k1}`)).toThrow(/twice/);
	});
});

describe('a sealed bid file', () => {
	const keys = parseBidFileKeys(k1);

	it('opens byte for byte, and holds neither the text nor the prices of the file', () => {
		const sealed = sealFile(file, where, keys);
		expect(sealed.includes('4.37')).toBe(false);
		expect(sealed.includes('IT-1')).toBe(false);
		expect(Buffer.compare(openSealedFile(sealed, where, keys), file)).toBe(0);
		expect(sealedKeyId(sealed)).toBe('k1');
	});

	it('uses a fresh data key and nonce for every file, so the same file never seals the same way', () => {
		expect(sealFile(file, where, keys).equals(sealFile(file, where, keys))).toBe(false);
	});

	it('refuses to open after any byte is changed, under another storage key, or without its master key', () => {
		const sealed = sealFile(file, where, keys);
		const changed = Buffer.from(sealed);
		changed[changed.length - 3]! ^= 1;
		expect(() => openSealedFile(changed, where, keys)).toThrow();
		expect(() => openSealedFile(sealed, 'uploads/event/other-supplier/0f6b', keys)).toThrow();
		expect(() => openSealedFile(sealed, where, parseBidFileKeys(k2))).toThrow(/master key k1/);
		expect(() => openSealedFile(file, where, keys)).toThrow(/not a sealed bid file/);
	});

	it('is re-wrapped under a new active key without re-encrypting, and then opens with the new key alone', () => {
		const sealed = sealFile(file, where, keys);
		const rotated = rewrapSealedFile(sealed, where, parseBidFileKeys(`${k2},${k1}`));
		expect(sealedKeyId(rotated)).toBe('k2');
		expect(rotated.subarray(-file.length).equals(sealed.subarray(-file.length))).toBe(true);
		expect(Buffer.compare(openSealedFile(rotated, where, parseBidFileKeys(k2)), file)).toBe(0);
		expect(rewrapSealedFile(rotated, where, parseBidFileKeys(`${k2},${k1}`))).toBe(rotated);
	});
});

describe('the commitment to a file', () => {
	it('is SHA-256 over salt || file bytes (value computed with Python hashlib)', () => {
		expect(commitToFile(Buffer.from('4.37'), Buffer.alloc(32)).commitment).toBe(
			'219b53d5bb1f0649605edd1532707720afeeaeabfd81ee61ea72f9c3ec522a4c'
		);
	});

	it('verifies with the revealed salt, and fails for another file, another salt or a malformed value', () => {
		const { salt, commitment } = commitToFile(file);
		expect(verifyCommitment(file, salt, commitment)).toBe(true);
		expect(verifyCommitment(Buffer.from(file.toString().replace('4.37', '4.38')), salt, commitment)).toBe(
			false
		);
		expect(verifyCommitment(file, randomBytes(32).toString('hex'), commitment)).toBe(false);
		expect(verifyCommitment(file, 'zz', commitment)).toBe(false);
	});

	it('uses a fresh salt each time, so the same file gives different commitments', () => {
		expect(commitToFile(file).commitment).not.toBe(commitToFile(file).commitment);
	});
});
