import nodemailer, { type Transporter } from 'nodemailer';
import { config } from '../config';

// Every message leaves through nodemailer to the relay named by SMTP_URL: the local fake in development
// and tests, a real relay in production.
let transport: Transporter | undefined;

function transporter(): Transporter {
	transport ??= nodemailer.createTransport(config().SMTP_URL);
	return transport;
}

export interface OutgoingMail {
	to: string;
	subject: string;
	text: string;
	html: string;
	attachments?: { filename: string; content: Buffer; contentType?: string }[];
}

export async function sendMail(mail: OutgoingMail): Promise<void> {
	await transporter().sendMail({ from: config().MAIL_FROM, ...mail });
}
