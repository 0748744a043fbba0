// Plain messages with a text part and a simple HTML part; every inserted value is escaped.
import { formatMoney, formatQuantity, formatUnitPrice } from '$lib/format';
import type { OutgoingMail } from './index';

const escape = (value: string) =>
	value.replace(
		/[&<>"']/g,
		(c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!
	);

function layout(paragraphs: string[], action: { label: string; url: string }): string {
	const body = paragraphs.map((p) => `<p style="margin:0 0 16px">${escape(p)}</p>`).join('');
	return `<!doctype html><html lang="en"><body style="font-family:'Public Sans',system-ui,sans-serif;color:#25211b;background:#faf8f4;padding:24px">
<div style="max-width:560px;margin:0 auto;background:#fff;border:1px solid #e3dccf;border-radius:8px;padding:24px">
<p style="margin:0 0 16px;font-weight:700;color:#24425f">Tenderloom</p>${body}
<p style="margin:24px 0"><a href="${escape(action.url)}" style="background:#2f5478;color:#fff;padding:10px 18px;border-radius:6px;text-decoration:none">${escape(action.label)}</a></p>
<p style="margin:0;font-size:13px;color:#4f4639">If the button does not work, copy this address into your browser:<br>${escape(action.url)}</p>
</div></body></html>`;
}

const minutesUntil = (expires: Date, now: Date) =>
	Math.max(1, Math.round((expires.getTime() - now.getTime()) / 60_000));

export function signInLinkMail(to: string, url: string, expires: Date, now = new Date()): OutgoingMail {
	const minutes = minutesUntil(expires, now);
	const lines = [
		'Here is your link to sign in to Tenderloom.',
		`It works once and for ${minutes} minutes. If you did not ask for it, you can ignore this message: nobody can sign in without the link.`
	];
	return {
		to,
		subject: 'Your Tenderloom sign-in link',
		text: `${lines.join('\n\n')}\n\nSign in: ${url}\n`,
		html: layout(lines, { label: 'Sign in to Tenderloom', url })
	};
}

export function invitationMail(
	to: string,
	invitation: { inviterName: string; organisationName: string; roleName: string; url: string; expires: Date },
	now = new Date()
): OutgoingMail {
	const hours = Math.round(minutesUntil(invitation.expires, now) / 60);
	const lines = [
		`${invitation.inviterName} has invited you to Tenderloom as ${invitation.roleName} for ${invitation.organisationName}.`,
		`The link below signs you in once and works for ${hours} hours. After that, ask for a new sign-in link on the sign-in page with this e-mail address.`
	];
	return {
		to,
		subject: 'You are invited to Tenderloom',
		text: `${lines.join('\n\n')}\n\nAccept and sign in: ${invitation.url}\n`,
		html: layout(lines, { label: 'Accept and sign in', url: invitation.url })
	};
}

/**
 * The newest entry of the event's decision trail when the message was made: its hash only. Its number
 * would tell a supplier how many entries (other suppliers' bids and withdrawals among them) came between
 * two of its messages; the hash names the entry just as well, and tells nothing of the others.
 */
export interface TrailHead {
	hash: string;
}

/**
 * The head travels in the message so it is kept outside Tenderloom's database: whoever holds the
 * message can show that the trail later lacked that entry or had a different one there.
 */
export const trailHeadLine = (reference: string, head: TrailHead) =>
	`Decision trail of ${reference} at this moment: newest entry SHA-256 ${head.hash}. Keep this message: it lets an auditor check that the trail was not cut short or rewritten afterwards.`;

/** A plain notice: paragraphs and one link. Values are escaped by the layout. */
export function notice(
	to: string,
	subject: string,
	lines: string[],
	action: { label: string; url: string },
	event?: EventMailContext
) {
	const all = event?.trailHead ? [...lines, trailHeadLine(event.reference, event.trailHead)] : lines;
	return {
		to,
		subject,
		text: `${all.join('\n\n')}\n\n${action.label}: ${action.url}\n`,
		html: layout(all, action)
	} satisfies OutgoingMail;
}

export interface EventMailContext {
	reference: string;
	title: string;
	buyerName: string;
	deadline: string;
	url: string;
	/** Set where the sender read it; every event message that has it carries it. */
	trailHead?: TrailHead | null;
}

export function eventInvitationMail(to: string, event: EventMailContext): OutgoingMail {
	return notice(
		to,
		`Invitation to bid: ${event.reference} ${event.title}`,
		[
			`${event.buyerName} invites your organisation to bid in the sourcing event ${event.reference} “${event.title}”.`,
			`Bids close at ${event.deadline}. The bid sheet, the terms and the clarifications are on the event's page.`
		],
		{ label: 'Open the event', url: event.url },
		event
	);
}

export function amendmentMail(
	to: string,
	event: EventMailContext,
	amendment: { number: number; summary: string; changes: string[] }
): OutgoingMail {
	return notice(
		to,
		`Amendment ${amendment.number} to ${event.reference} ${event.title}`,
		[
			`The buyer has amended the sourcing event ${event.reference} “${event.title}” (amendment ${amendment.number}).`,
			amendment.summary,
			...amendment.changes,
			`Bids close at ${event.deadline}. Check that your bid still fits the amended event.`
		],
		{ label: 'Open the event', url: event.url },
		event
	);
}

/**
 * To each user of an invited supplier organisation that has not bid: only its own missing bid, never
 * another supplier's name or how many have bid.
 */
export function bidReminderMail(to: string, event: EventMailContext): OutgoingMail {
	return notice(
		to,
		`Reminder: no bid yet for ${event.reference} ${event.title}`,
		[
			`${event.buyerName} reminds you that your organisation has not yet submitted a bid in the sourcing event ${event.reference} “${event.title}”.`,
			`Bids close at ${event.deadline}. A bid received after that time cannot be accepted.`,
			`The bid sheet, the terms and the clarifications are on the event's page. If you have bid in the meantime, or do not intend to bid, you can ignore this message.`
		],
		{ label: 'Open the event', url: event.url },
		event
	);
}

export function clarificationMail(
	to: string,
	event: EventMailContext,
	clarification: { question: string; answer: string }
): OutgoingMail {
	return notice(
		to,
		`Clarification for ${event.reference} ${event.title}`,
		[
			`A question about ${event.reference} “${event.title}” has been answered for every invited supplier. The asker is not named.`,
			`Question: ${clarification.question}`,
			`Answer: ${clarification.answer}`
		],
		{ label: 'Open the event', url: event.url },
		event
	);
}

export function bidReceiptMail(
	to: string,
	event: EventMailContext,
	receipt: {
		revision: number;
		receivedAt: string;
		fileName: string | null;
		sha256: string | null;
		lines: number;
	}
): OutgoingMail {
	return notice(
		to,
		`Bid received: ${event.reference} revision ${receipt.revision}`,
		[
			`Your bid for ${event.reference} “${event.title}” was received and accepted as revision ${receipt.revision}.`,
			`Received at ${receipt.receivedAt} (server time).`,
			receipt.fileName
				? `File: ${receipt.fileName}, SHA-256 ${receipt.sha256}.`
				: 'Entered on screen; no file.',
			`Lines priced: ${receipt.lines}. You can change or withdraw the bid until ${event.deadline}; the latest revision is your bid.`
		],
		{ label: 'Open the event', url: event.url },
		event
	);
}

export function withdrawalMail(to: string, event: EventMailContext, at: string): OutgoingMail {
	return notice(
		to,
		`Bid withdrawn: ${event.reference}`,
		[
			`Your bid for ${event.reference} “${event.title}” was withdrawn at ${at} (server time).`,
			`You can submit a new bid until ${event.deadline}.`
		],
		{ label: 'Open the event', url: event.url },
		event
	);
}

export interface NoticeLine {
	item: string;
	quantity: number;
	unitPrice: number;
	cost: number;
}

/** What the buyer compared to reach the result: the round of bids and the non-price criteria in money. */
export interface NoticeBasis {
	/** The round of bids the award used (1: the bids up to the deadline). */
	round: number;
	/** The published criteria's names (none: bids were compared on price). */
	criteria: string[];
	/** The supplier's evaluated total (its price plus the criteria in money); null when not awarded. */
	evaluatedTotal: number | null;
}

function basisLines(basis: NoticeBasis | undefined, currency: string): string[] {
	if (!basis) return [];
	return [
		...(basis.round > 1 ? [`The result is on the revised bids of round ${basis.round}.`] : []),
		...(basis.criteria.length
			? [
					`Bids were compared on evaluated cost: the price plus the money value of the criteria published with the event (${basis.criteria.join(', ')}).` +
						(basis.evaluatedTotal === null
							? ''
							: ` Your awarded lines' evaluated cost: ${formatMoney(basis.evaluatedTotal, currency)} ${currency}; the prices above are before the criteria.`)
				]
			: [])
	];
}

export function awardNoticeMail(
	to: string,
	event: EventMailContext & { currency: string },
	notice: {
		supplierName: string;
		lines: NoticeLine[];
		standstillEndsOn: string;
		basis?: NoticeBasis;
		/** The supplier bid in another currency: its award in that currency, at the event's fixed rate. */
		ownCurrency?: {
			code: string;
			rate: number;
			source: string;
			rateDate: string;
			total: number;
			lines: { item: string; unitPrice: number; cost: number }[];
		};
	}
): OutgoingMail {
	const total = notice.lines.reduce((a, l) => a + l.cost, 0);
	const own = notice.ownCurrency;
	const table = notice.lines.map((l, k) => {
		const inOwn = own?.lines[k];
		return (
			`${l.item}: ${formatQuantity(l.quantity)} at ${formatUnitPrice(l.unitPrice, event.currency)} ${event.currency} = ${formatMoney(l.cost, event.currency)} ${event.currency}` +
			(own && inOwn
				? ` (your price ${formatUnitPrice(inOwn.unitPrice, own.code)} ${own.code} = ${formatMoney(inOwn.cost, own.code)} ${own.code})`
				: '')
		);
	});
	return notice_(
		to,
		`Award notice: ${event.reference} ${event.title}`,
		[
			`${event.buyerName} intends to award ${notice.supplierName} the following lines of ${event.reference} “${event.title}”. Your lines are attached as a spreadsheet too.`,
			...table,
			`Total: ${formatMoney(total, event.currency)} ${event.currency} (landed cost where the buyer added freight or duty).`,
			...(own
				? [
						`In your bid currency: ${formatMoney(own.total, own.code)} ${own.code}. Bids were compared in ${event.currency} at the rate fixed before bidding: 1 ${own.code} = ${own.rate} ${event.currency} (${own.source}, ${own.rateDate}).`
					]
				: []),
			...basisLines(notice.basis, event.currency),
			`The standstill period ends on ${notice.standstillEndsOn} (confirm with local rules); the contract is not concluded before then. This notice is not itself a contract.`
		],
		{ label: 'See your result', url: event.url },
		event
	);
}

export function regretNoticeMail(
	to: string,
	event: EventMailContext & { currency?: string },
	notice: { supplierName: string; standstillEndsOn: string; basis?: NoticeBasis }
): OutgoingMail {
	return notice_(
		to,
		`Result of ${event.reference} ${event.title}`,
		[
			`Thank you for bidding in ${event.reference} “${event.title}”. ${event.buyerName} does not intend to award ${notice.supplierName} any line of this event.`,
			...basisLines(notice.basis, event.currency ?? ''),
			`The standstill period ends on ${notice.standstillEndsOn} (confirm with local rules). You may ask the buyer for the reasons within that period.`
		],
		{ label: 'See your result', url: event.url },
		event
	);
}

const notice_ = notice;

/**
 * To each user of a supplier invited to a new round: the new deadline and its own feedback only (lines
 * already worded), never another supplier's name or price, nor how many bid.
 */
export function roundInvitationMail(
	to: string,
	event: EventMailContext,
	round: { number: number; deadline: string; feedback: string[] }
): OutgoingMail {
	return notice(
		to,
		`Round ${round.number} of bids for ${event.reference} ${event.title}`,
		[
			`${event.buyerName} invites you to revise your bid in round ${round.number} of the sourcing event ${event.reference} “${event.title}”.`,
			`Revised bids close at ${round.deadline}. Until then your revised bid stays sealed; if you do not revise, your current bid stands.`,
			...(round.feedback.length
				? ['Where your current bid stands:', ...round.feedback]
				: ['The buyer gives no feedback on the bids in this round.'])
		],
		{ label: 'Open the event', url: event.url },
		event
	);
}
