import { readMailbox, type KeptMessage } from '../../fakes/mailbox.mjs';

export const MAIL_DIR = process.env.REGOLOG_MAIL_DIR ?? '.regolog/test/mail';

/** Waits until the fake SMTP server has kept a message matching the predicate. */
export async function waitForMail(match: (m: KeptMessage) => boolean, ms = 15_000, dir = MAIL_DIR): Promise<KeptMessage> {
	const until = Date.now() + ms;
	for (;;) {
		const found = (await readMailbox(dir)).filter(match);
		if (found.length) return found[found.length - 1];
		if (Date.now() > until) throw new Error(`no matching mail arrived in ${dir} within ${ms} ms`);
		await new Promise((r) => setTimeout(r, 200));
	}
}

export async function mailsTo(address: string, dir = MAIL_DIR): Promise<KeptMessage[]> {
	return (await readMailbox(dir)).filter((m) => m.to.includes(address));
}

/** The single-use token in a mail's link (…/invite/<token> or …/reset/<token>). */
export function linkToken(m: KeptMessage, kind: 'invite' | 'reset'): string {
	const found = m.text.match(new RegExp(`/${kind}/([A-Za-z0-9_-]+)`));
	if (!found) throw new Error(`no ${kind} link in mail "${m.subject}"`);
	return found[1];
}
