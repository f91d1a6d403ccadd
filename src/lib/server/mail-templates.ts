import { config } from './config';

function esc(s: string): string {
	return s.replace(/[&<>"']/g, (c) => ({ '&': '&amp;', '<': '&lt;', '>': '&gt;', '"': '&quot;', "'": '&#39;' })[c]!);
}

/** The closing line of every message: Regolog and the facility named by the `facility.name` setting. */
export const signOff = (facility: string) => `— Regolog, ${facility}`;

/** A custody notification: its lines, the link into Regolog and the sign-off. */
export function noticeText(lines: string[], href: string, facility: string): string {
	return [...lines, '', `Open in Regolog: ${href}`, '', signOff(facility)].join('\n');
}

function wrap(title: string, paragraphs: string[], link: { href: string; label: string }, facility: string) {
	const text = [...paragraphs, '', `${link.label}: ${link.href}`, '', signOff(facility)].join('\n');
	const html = `<div style="font-family:sans-serif;max-width:36rem">
<h2 style="color:#1d524f">${esc(title)}</h2>
${paragraphs.map((p) => `<p>${esc(p)}</p>`).join('\n')}
<p><a href="${esc(link.href)}" style="background:#1d524f;color:#fff;padding:8px 14px;border-radius:6px;text-decoration:none">${esc(link.label)}</a></p>
<p style="color:#6f6a5c;font-size:90%">Regolog, ${esc(facility)}</p></div>`;
	return { text, html };
}

export function inviteMail(name: string, roleLabel: string, token: string, invitedBy: string, facility: string) {
	const href = `${config.origin}/invite/${token}`;
	return {
		subject: 'Your Regolog account is waiting',
		...wrap(
			'Welcome to Regolog',
			[
				`Hello ${name},`,
				`${invitedBy} has opened a Regolog account for you as ${roleLabel}.`,
				'Choose your password with the link below. The link works once and expires in 24 hours.'
			],
			{ href, label: 'Choose a password' },
			facility
		)
	};
}

export function resetMail(name: string, token: string, facility: string) {
	const href = `${config.origin}/reset/${token}`;
	return {
		subject: 'Reset your Regolog password',
		...wrap(
			'Password reset',
			[
				`Hello ${name},`,
				'Someone (hopefully you) asked to reset the password of your Regolog account.',
				'The link below works once and expires in one hour. If you did not ask for it, ignore this message: your password stays as it is.'
			],
			{ href, label: 'Choose a new password' },
			facility
		)
	};
}

// ── Trail checkpoints (witness copies of the signed head) ───────────────────────────────────────

/** A signed checkpoint for a witness to keep: the exact signed text and the signature. */
export function checkpointMail(cp: { seq: number; hash: string; keyId: string; signed: string; signature: string }, fingerprint: string, facility: string) {
	const href = `${config.origin}/audit/trail`;
	const paragraphs = [
		`The trail's head at event ${cp.seq} has been signed with key ${cp.keyId} (public key SHA-256 ${fingerprint}).`,
		'Keep this message: it is a copy of the head outside the database, and a later verification can be compared with it.',
		`Head hash: ${cp.hash}`,
		`Signed text (UTF-8, exactly): ${cp.signed}`,
		`Ed25519 signature (base64): ${cp.signature}`
	];
	return { subject: `Regolog trail checkpoint at event ${cp.seq}`, ...wrap('Trail checkpoint', paragraphs, { href, label: 'Open the trail' }, facility) };
}
