// The local SMTP stand-in: accepts every message on loopback, keeps each one as JSON under
// SMTP_FAKE_DIR (so they survive a restart), and serves them over a small HTTP API:
//   GET /messages (newest first; ?to= filters by recipient, ?messageId= by Message-ID), GET /messages/:id,
//   DELETE /messages
//   PUT /outages/:address, DELETE /outages/:address: while an address is listed, the fake answers its
//   RCPT TO with "451 try again later", as a relay in trouble would (tests of retried mail); ?times=N
//   refuses only the next N attempts, ?code=550 refuses with a permanent error instead
//   PUT /holds/:address?seconds=S, DELETE /holds/:address: a message to the address is stored at once but
//   answered only S seconds later (a sender killed meanwhile never learns that it went out)
import { randomUUID } from 'node:crypto';
import { mkdirSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { createServer } from 'node:http';
import { join } from 'node:path';
import { simpleParser, type AddressObject } from 'mailparser';
import { SMTPServer } from 'smtp-server';

const smtpPort = Number(process.env.SMTP_FAKE_PORT ?? 2526);
const httpPort = Number(process.env.MAIL_FAKE_HTTP_PORT ?? 8026);
const directory = process.env.SMTP_FAKE_DIR ?? '.data/mail';
mkdirSync(directory, { recursive: true });

interface StoredMessage {
	id: string;
	receivedAt: string;
	envelope: { from: string | null; to: string[] };
	from: string;
	to: string[];
	subject: string;
	messageId: string | null;
	text: string;
	html: string | null;
	attachments: { filename: string | null; contentType: string; size: number }[];
}

function addresses(field: AddressObject | AddressObject[] | undefined): string[] {
	const list = Array.isArray(field) ? field : field ? [field] : [];
	return list.flatMap((a) => a.value.map((v) => v.address ?? '')).filter(Boolean);
}

/** Refused addresses: how many more attempts to refuse (Infinity: until lifted), and with which code. */
const outages = new Map<string, { left: number; code: number }>();
/** Addresses whose messages are answered late, in milliseconds. */
const holds = new Map<string, number>();

const smtp = new SMTPServer({
	// The bundled certificate of smtp-server has expired; the fake speaks plain SMTP on loopback only.
	authOptional: true,
	disabledCommands: ['STARTTLS'],
	size: 25 * 1024 * 1024,
	logger: false,
	onRcptTo(address, _session, callback) {
		const key = address.address.toLowerCase();
		const outage = outages.get(key);
		if (outage) {
			outage.left -= 1;
			if (outage.left <= 0) outages.delete(key);
			const error = new Error(
				outage.code >= 500
					? `${outage.code} 5.1.1 Mailbox unavailable`
					: `${outage.code} 4.3.0 Temporary failure: try again later`
			) as Error & { responseCode: number };
			error.responseCode = outage.code;
			return callback(error);
		}
		callback();
	},
	onData(stream, session, callback) {
		simpleParser(stream)
			.then((mail) => {
				// The file name sorts by arrival: newest first is a reverse sort of the names.
				const id = `${Date.now().toString().padStart(15, '0')}-${randomUUID().slice(0, 8)}`;
				const message: StoredMessage = {
					id,
					receivedAt: new Date().toISOString(),
					envelope: {
						from: session.envelope.mailFrom ? session.envelope.mailFrom.address : null,
						to: session.envelope.rcptTo.map((r) => r.address)
					},
					from: addresses(mail.from)[0] ?? '',
					to: addresses(mail.to),
					subject: mail.subject ?? '',
					messageId: mail.messageId ?? null,
					text: mail.text ?? '',
					html: typeof mail.html === 'string' ? mail.html : null,
					attachments: mail.attachments.map((a) => ({
						filename: a.filename ?? null,
						contentType: a.contentType,
						size: a.size
					}))
				};
				writeFileSync(join(directory, `${id}.json`), JSON.stringify(message));
				const hold = Math.max(0, ...message.envelope.to.map((a) => holds.get(a.toLowerCase()) ?? 0));
				if (hold) setTimeout(() => callback(), hold);
				else callback();
			})
			.catch((error: Error) => callback(error));
	}
});

function listMessages(): StoredMessage[] {
	return readdirSync(directory)
		.filter((f) => f.endsWith('.json'))
		.sort()
		.reverse()
		.map((f) => JSON.parse(readFileSync(join(directory, f), 'utf8')) as StoredMessage);
}

const http = createServer((request, response) => {
	const url = new URL(request.url ?? '/', `http://127.0.0.1:${httpPort}`);
	const send = (status: number, body: unknown) => {
		response.writeHead(status, { 'content-type': 'application/json' });
		response.end(JSON.stringify(body));
	};
	if (url.pathname === '/messages' && request.method === 'GET') {
		const to = url.searchParams.get('to')?.toLowerCase();
		const bare = (id: string | null | undefined) => id?.trim().replace(/^<|>$/g, '') ?? '';
		const messageId = bare(url.searchParams.get('messageId'));
		const messages = listMessages().filter(
			(m) =>
				(!to || m.to.some((a) => a.toLowerCase() === to)) && (!messageId || bare(m.messageId) === messageId)
		);
		return send(200, messages);
	}
	if (url.pathname === '/messages' && request.method === 'DELETE') {
		for (const f of readdirSync(directory)) rmSync(join(directory, f), { force: true });
		return send(200, { deleted: true });
	}
	const outage = /^\/outages\/(.+)$/.exec(url.pathname);
	if (outage && (request.method === 'PUT' || request.method === 'DELETE')) {
		const address = decodeURIComponent(outage[1]!).toLowerCase();
		const times = Number(url.searchParams.get('times') ?? Infinity);
		const code = Number(url.searchParams.get('code') ?? 451);
		if (request.method === 'PUT') outages.set(address, { left: times > 0 ? times : Infinity, code });
		else outages.delete(address);
		return send(200, { address, outage: outages.has(address) });
	}
	const hold = /^\/holds\/(.+)$/.exec(url.pathname);
	if (hold && (request.method === 'PUT' || request.method === 'DELETE')) {
		const address = decodeURIComponent(hold[1]!).toLowerCase();
		if (request.method === 'PUT') holds.set(address, Number(url.searchParams.get('seconds') ?? 10) * 1000);
		else holds.delete(address);
		return send(200, { address, holdMs: holds.get(address) ?? 0 });
	}
	const one = /^\/messages\/([\w-]+)$/.exec(url.pathname);
	if (one && request.method === 'GET') {
		const message = listMessages().find((m) => m.id === one[1]);
		return message ? send(200, message) : send(404, { error: 'no such message' });
	}
	send(404, { error: 'not found' });
});

smtp.listen(smtpPort, '127.0.0.1', () => {
	http.listen(httpPort, '127.0.0.1', () => {
		console.log(
			`smtp fake on 127.0.0.1:${smtpPort}, mailbox API on http://127.0.0.1:${httpPort}, data in ${directory}`
		);
	});
});

const shutdown = () => {
	http.close();
	smtp.close(() => process.exit(0));
	setTimeout(() => process.exit(0), 2000).unref();
};
process.on('SIGTERM', shutdown);
process.on('SIGINT', shutdown);
// the supervisor holds our stdin; when it goes away, so do we
process.stdin.on('close', shutdown);
process.stdin.resume();
