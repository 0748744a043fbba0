// Reads the SMTP fake's HTTP API.
import { mailApi } from './env';

export interface FakeMail {
	id: string;
	receivedAt: string;
	from: string;
	to: string[];
	subject: string;
	text: string;
	html: string | null;
	attachments: { filename: string | null }[];
}

export async function mailTo(address: string): Promise<FakeMail[]> {
	const response = await fetch(`${mailApi()}/messages?to=${encodeURIComponent(address)}`);
	return (await response.json()) as FakeMail[];
}

/**
 * Waits for the newest message to an address (received after a moment, and with a matching subject, when
 * given): mail goes through a queue, so a receipt sent earlier may arrive after the moment.
 */
export async function latestMailTo(
	address: string,
	options: { after?: Date; timeoutMs?: number; subject?: RegExp } = {}
): Promise<FakeMail> {
	const deadline = Date.now() + (options.timeoutMs ?? 10_000);
	while (Date.now() < deadline) {
		const [newest] = (await mailTo(address)).filter(
			(m) => !options.subject || options.subject.test(m.subject)
		);
		if (newest && (!options.after || new Date(newest.receivedAt) >= options.after)) return newest;
		await new Promise((r) => setTimeout(r, 150));
	}
	throw new Error(`no mail reached ${address} in time`);
}

/**
 * The sign-in mail's subject (src/lib/server/mail/templates.ts). Signing in reads the newest mail of this
 * subject only: a receipt or notice mailed to the same address a moment later carries a link too.
 */
export const SIGN_IN_SUBJECT = /^Your Tenderloom sign-in link$/;

export function linkIn(text: string): string {
	const match = /https?:\/\/\S+/.exec(text);
	if (!match) throw new Error(`no link in the message:\n${text}`);
	return match[0];
}
