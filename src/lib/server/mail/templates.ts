// Plain messages with a text part and a simple HTML part; every inserted value is escaped.
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
