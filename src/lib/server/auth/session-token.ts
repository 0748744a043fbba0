// The session cookie's token, in Auth.js's own format (a JWE: "dir" key management, A256CBC-HS512, the key
// derived by HKDF-SHA256 from AUTH_SECRET with the cookie name as salt, the key's JWK thumbprint as "kid"),
// so a cookie made by Auth.js's encoder reads here and the other way round (session-token.spec.ts checks
// both against Auth.js's own functions). Two savings on every signed-in request, where Auth.js derived
// the key twice and encrypted a new token each time:
// - the key and its thumbprint are derived once per secret and salt;
// - the token the request came with goes back unchanged while it is younger than REISSUE_AFTER_SECONDS
//   and says the same (user, session, role, organisation); only then is a new one (a new expiry) made.
// - a token read once is not decrypted again: the claims of the last READ_CACHE_SIZE tokens read are kept
//   (by the exact token string, so nothing unverified is ever trusted) until they expire.
// Every request still re-reads the session and its user from the database (auth/index.ts, `jwt`).
import { hkdfSync, randomUUID } from 'node:crypto';
import type { SvelteKitAuthConfig } from '@auth/sveltekit';
import { EncryptJWT, base64url, calculateJwkThumbprint, jwtDecrypt } from 'jose';

type JwtOptions = NonNullable<SvelteKitAuthConfig['jwt']>;
type Encode = NonNullable<JwtOptions['encode']>;
type Decode = NonNullable<JwtOptions['decode']>;
type Token = NonNullable<Awaited<ReturnType<Decode>>>;

/** A token younger than this goes back as it came; an older one is replaced by one with a new expiry. */
export const REISSUE_AFTER_SECONDS = 5 * 60;

const ALG = 'dir';
const ENC = 'A256CBC-HS512';
/** jose's clock tolerance in Auth.js's decoder, kept. */
const CLOCK_TOLERANCE_SECONDS = 15;

/** The token a request came with, as read, so that encoding the same claims again can return it. */
export interface TokenSeen {
	raw: string;
	claims: Token;
}

/** How many verified tokens are kept decrypted, the oldest dropped first (a few hundred bytes each). */
export const READ_CACHE_SIZE = 10_000;

interface DerivedKey {
	key: Uint8Array;
	kid: string;
}
const derived = new Map<string, Promise<DerivedKey>>();

/** Auth.js's key derivation (@auth/core/jwt, getDerivedEncryptionKey), once per secret, salt and enc. */
function keyFor(secret: string, salt: string, enc: string): Promise<DerivedKey> {
	const cacheKey = JSON.stringify([secret, salt, enc]);
	let found = derived.get(cacheKey);
	if (!found) {
		const length = enc === 'A256GCM' ? 32 : enc === ENC ? 64 : 0;
		if (!length) throw new Error('Unsupported JWT Content Encryption Algorithm');
		const key = new Uint8Array(
			hkdfSync('sha256', secret, salt, `Auth.js Generated Encryption Key (${salt})`, length)
		);
		found = calculateJwkThumbprint(
			{ kty: 'oct', k: base64url.encode(key) },
			length === 64 ? 'sha512' : 'sha256'
		).then((kid) => ({ key, kid }));
		derived.set(cacheKey, found);
	}
	return found;
}

const secretsOf = (secret: string | string[]) => (Array.isArray(secret) ? secret : [secret]);

/** The claims that say who the session is for: all but the ones a new token changes. */
function sameSession(a: Token, b: Token): boolean {
	const who = ({ iat: _iat, exp: _exp, jti: _jti, ...rest }: Token) => JSON.stringify(rest);
	return who(a) === who(b);
}

/**
 * Auth.js's `jwt.encode` and `jwt.decode`. `seen` is where the token of the current request is kept
 * between the two (the caller's request store): undefined outside a request.
 */
export function sessionTokenCodec(seen: () => { token?: TokenSeen } | undefined): {
	encode: Encode;
	decode: Decode;
} {
	const encode: Encode = async ({ token = {}, secret, maxAge = 30 * 24 * 3600, salt }) => {
		const request = seen()?.token;
		const now = Math.floor(Date.now() / 1000);
		if (
			request &&
			typeof request.claims.iat === 'number' &&
			now - request.claims.iat < REISSUE_AFTER_SECONDS &&
			sameSession(request.claims, token)
		) {
			return request.raw;
		}
		const [first] = secretsOf(secret);
		if (!first || !salt) throw new Error('A session token needs a secret and a salt (the cookie name).');
		const { key, kid } = await keyFor(first, salt, ENC);
		return new EncryptJWT(token as Record<string, unknown>)
			.setProtectedHeader({ alg: ALG, enc: ENC, kid })
			.setIssuedAt(now)
			.setExpirationTime(now + maxAge)
			.setJti(randomUUID())
			.encrypt(key);
	};

	const read = new Map<string, Token>();
	const remember = (cacheKey: string, claims: Token) => {
		if (read.size >= READ_CACHE_SIZE) read.delete(read.keys().next().value!);
		read.set(cacheKey, claims);
	};

	const decode: Decode = async ({ token, secret, salt }) => {
		if (!token) return null;
		const cacheKey = JSON.stringify([secret, salt, token]);
		const known = read.get(cacheKey);
		const now = Math.floor(Date.now() / 1000);
		if (known && typeof known.exp === 'number' && now <= known.exp + CLOCK_TOLERANCE_SECONDS) {
			// A copy: what the callbacks do with the claims never reaches the kept ones.
			const claims = structuredClone(known);
			const store = seen();
			if (store) store.token = { raw: token, claims };
			return claims;
		}
		if (known) read.delete(cacheKey);
		const { payload } = await jwtDecrypt(
			token,
			async ({ kid, enc }) => {
				for (const candidate of secretsOf(secret)) {
					const found = await keyFor(candidate, salt, enc);
					if (kid === undefined || kid === found.kid) return found.key;
				}
				throw new Error('no matching decryption secret');
			},
			{
				clockTolerance: CLOCK_TOLERANCE_SECONDS,
				keyManagementAlgorithms: [ALG],
				contentEncryptionAlgorithms: [ENC, 'A256GCM']
			}
		);
		const claims = payload as Token;
		remember(cacheKey, structuredClone(claims));
		const store = seen();
		if (store) store.token = { raw: token, claims };
		return claims;
	};

	return { encode, decode };
}
