// The sign-in-link job: a fresh link for an active account (auth/sign-in-links.ts).
import type PgBoss from 'pg-boss';
import { sendSignInLink, type SignInLinkJob } from '../../auth/sign-in-links';

export async function handleSignInLink(job: PgBoss.Job<SignInLinkJob>): Promise<void> {
	await sendSignInLink(job.data);
}
