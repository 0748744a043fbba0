import { hostname } from 'node:os';
import nodemailer, { type Transporter } from 'nodemailer';
import { config } from '../config';

// Every message leaves through nodemailer to the relay named by SMTP_URL: the local fake in development
// and tests, a real relay in production. The timeouts bound how long one send can hold its delivery
// (services/mail-delivery.ts leases a delivery for longer than that).
let transport: Transporter | undefined;

/** The longest one send may take, connection to the relay's answer: a delivery's lease is longer. */
export const SEND_TIMEOUT_SECONDS = 25;

function transporter(): Transporter {
	transport ??= nodemailer.createTransport(config().SMTP_URL, {
		connectionTimeout: 5_000,
		greetingTimeout: 5_000,
		socketTimeout: 15_000
	});
	return transport;
}

export interface OutgoingMail {
	to: string;
	subject: string;
	text: string;
	html: string;
	attachments?: { filename: string; content: Buffer; contentType?: string }[];
	/** A fixed Message-ID (`<…@…>`): the same mail sent again carries the same one. */
	messageId?: string;
}

export async function sendMail(mail: OutgoingMail): Promise<void> {
	await transporter().sendMail({ from: config().MAIL_FROM, ...mail });
}

/** Names this process as a sender in the deliveries it holds. */
export const senderName = () => `${hostname()}:${process.pid}`;

/**
 * Whether an error proves the relay did not take the message: it came before the message data was sent
 * (connecting, greeting, sign-in, sender or recipient refused). After that, the message may have been
 * accepted although the answer never came.
 */
export function refusedBeforeData(error: unknown): boolean {
	const { code, command } = (error ?? {}) as { code?: string; command?: string };
	if (['EENVELOPE', 'EDNS', 'ECONNECTION', 'EAUTH', 'ETLS'].includes(code ?? '')) return true;
	return typeof command === 'string' && !/DATA|^\.$|^$/i.test(command.trim());
}

/**
 * Asks the relay whether it took a message with this Message-ID: true or false where the relay can be
 * asked (the local SMTP fake's mailbox API), undefined where it cannot (an ordinary SMTP relay).
 */
export async function relayHasMessage(messageId: string): Promise<boolean | undefined> {
	const api = config().MAIL_FAKE_API;
	if (!api) return undefined;
	const response = await fetch(`${api}/messages?messageId=${encodeURIComponent(messageId)}`, {
		signal: AbortSignal.timeout(5_000)
	});
	if (!response.ok) throw new Error(`the mailbox API answered ${response.status}`);
	return ((await response.json()) as unknown[]).length > 0;
}
