import { config } from './config';

// Reads the local SMTP fake's HTTP API, for /dev/mailbox. Only ever configured in development and tests.
export interface MailboxMessage {
	id: string;
	receivedAt: string;
	from: string;
	to: string[];
	subject: string;
	text: string;
	attachments: { filename: string | null }[];
}

export async function listMailbox(): Promise<MailboxMessage[]> {
	const api = config().MAIL_FAKE_API;
	if (!api) return [];
	const response = await fetch(`${api}/messages`);
	if (!response.ok) throw new Error(`the mail fake answered ${response.status}`);
	return (await response.json()) as MailboxMessage[];
}
