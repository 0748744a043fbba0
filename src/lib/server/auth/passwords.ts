import bcrypt from 'bcryptjs';

// bcrypt with cost 12 (OWASP Password Storage Cheat Sheet: a work factor of 10 or more). bcrypt reads
// at most 72 bytes, hence the upper bound.
const COST = 12;
export const PASSWORD_MIN = 12;
export const PASSWORD_MAX_BYTES = 72;

export function hashPassword(password: string): Promise<string> {
	return bcrypt.hash(password, COST);
}

// Compared against when the account does not exist, so a wrong e-mail costs as long as a wrong password.
const NO_ACCOUNT_HASH = bcrypt.hashSync('no account has this password', COST);

export async function verifyPassword(password: string, hash: string | null | undefined): Promise<boolean> {
	const matches = await bcrypt.compare(password, hash ?? NO_ACCOUNT_HASH);
	return matches && Boolean(hash);
}

/** Problems with a new password, in words for the form; empty when it is acceptable. */
export function passwordProblems(password: string): string[] {
	const problems: string[] = [];
	if (password.length < PASSWORD_MIN) problems.push(`Use at least ${PASSWORD_MIN} characters.`);
	if (Buffer.byteLength(password, 'utf8') > PASSWORD_MAX_BYTES)
		problems.push(`Use at most ${PASSWORD_MAX_BYTES} bytes (about ${PASSWORD_MAX_BYTES} plain letters).`);
	return problems;
}
