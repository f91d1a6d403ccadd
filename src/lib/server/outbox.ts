import { QueryTypes, type Transaction } from 'sequelize';
import type { Transporter } from 'nodemailer';
import { models } from './models';
import { mailer } from './mail';
import { config } from './config';
import { jobScheduled, kickJob, type Job } from './jobs';

export interface OutgoingMail {
	to: string;
	subject: string;
	text: string;
	html?: string;
	kind: string;
}

/** Retry delay after the n-th failed attempt: 5 s, 10 s, 20 s, … capped at one hour. */
export function backoffSeconds(attempts: number): number {
	return Math.min(3600, 5 * 2 ** Math.max(0, attempts - 1));
}

/** After this many failed attempts (about three days at the cap) a message is marked failed for an admin to see. */
export const MAX_ATTEMPTS = 80;

/**
 * Queues a message in the caller's transaction: it is sent only if the change commits, and it
 * survives a mail outage because the sender retries from the table.
 */
export async function enqueueMail(t: Transaction, m: OutgoingMail, opts: { notBefore?: Date } = {}): Promise<number> {
	const sequelize = models();
	const [row] = await sequelize.query<{ id: number }>(
		`INSERT INTO mail_outbox (to_address, subject, body_text, body_html, kind, next_attempt_at)
		 VALUES (:to, :subject, :text, :html, :kind, :notBefore) RETURNING id`,
		{ type: QueryTypes.SELECT, replacements: { ...m, html: m.html ?? null, notBefore: opts.notBefore ?? new Date() }, transaction: t }
	);
	// In the app (where the sender runs), try to send as soon as the change has committed.
	if (!opts.notBefore && jobScheduled(outboxJob.name)) t.afterCommit(() => void kickOutbox());
	return row.id;
}

interface Due {
	id: number;
	to_address: string;
	subject: string;
	body_text: string;
	body_html: string | null;
	attempts: number;
	created_ms: number;
}

/**
 * The Message-ID of an outbox row: the same on every attempt, so that a relay or a mailbox that
 * receives one message twice (the one case left: an instance killed between the relay's
 * acceptance and its own commit) can tell it is a repeat.
 */
export function outboxMessageId(id: number, createdMs: number): string {
	const domain = /@([^>\s]+)>?\s*$/.exec(config.mail.from)?.[1] ?? 'regolog.invalid';
	return `<regolog.${id}.${createdMs}@${domain}>`;
}

/**
 * Sends due messages. Each is claimed with FOR UPDATE SKIP LOCKED inside the transaction that
 * sends it, so several senders (on one instance or several) never send one message twice, and a
 * sender that dies mid-send loses its connection and with it the claim: the message is still
 * queued for the next sender. The row is marked sent before the relay is asked and committed as
 * soon as the relay accepts, so after the relay's acceptance only the COMMIT is left to say; a
 * failure overwrites the mark and schedules the next attempt with backoff. Messages never tried
 * go first, so while the relay is down a new message still gets its first attempt (and its error on
 * record) at once instead of waiting behind older retries. `onlyIds` sends
 * just those queued messages, due or not (an operator's "send now").
 */
export async function deliverDue(opts: { transport?: Transporter; limit?: number; onlyIds?: number[] } = {}): Promise<{ sent: number; failed: number }> {
	const sequelize = models();
	const transport = opts.transport ?? mailer();
	let sent = 0;
	let failed = 0;
	for (let i = 0; i < (opts.limit ?? 50); i++) {
		const done = await sequelize.transaction(async (t) => {
			const rows = await sequelize.query<Due>(
				`SELECT id, to_address, subject, body_text, body_html, attempts, (extract(epoch FROM created_at) * 1000)::bigint AS created_ms FROM mail_outbox
				 WHERE status = 'queued' AND ${opts.onlyIds ? 'id IN (:ids)' : 'next_attempt_at <= now()'}
				 ORDER BY attempts, next_attempt_at, id LIMIT 1 FOR UPDATE SKIP LOCKED`,
				{ type: QueryTypes.SELECT, transaction: t, replacements: { ids: opts.onlyIds ?? [] } }
			);
			if (!rows.length) return null;
			const m = rows[0];
			await sequelize.query(`UPDATE mail_outbox SET status = 'sent', sent_at = now(), attempts = attempts + 1, last_error = NULL WHERE id = :id`, {
				replacements: { id: m.id }, transaction: t
			});
			try {
				await transport.sendMail({
					from: config.mail.from,
					to: m.to_address,
					subject: m.subject,
					text: m.body_text,
					html: m.body_html ?? undefined,
					messageId: outboxMessageId(m.id, m.created_ms)
				});
				return 'sent' as const;
			} catch (e) {
				const attempts = m.attempts + 1;
				await sequelize.query(
					`UPDATE mail_outbox SET attempts = :attempts, last_error = :err, sent_at = NULL,
					   next_attempt_at = now() + make_interval(secs => :delay),
					   status = CASE WHEN :attempts >= :max THEN 'failed' ELSE 'queued' END
					 WHERE id = :id`,
					{
						replacements: { id: m.id, attempts, err: String((e as Error).message ?? e).slice(0, 500), delay: backoffSeconds(attempts), max: MAX_ATTEMPTS },
						transaction: t
					}
				);
				return 'failed' as const;
			}
		});
		if (done === null) break;
		if (done === 'sent') sent++;
		else failed++;
		// After a failure the relay is probably down: stop and wait for the next round.
		if (done === 'failed') break;
	}
	return { sent, failed };
}

/** The mail sender as a background job: a round every few seconds, one instance at a time. */
export const outboxJob: Job = { name: 'mail-outbox', everyMs: 3000, run: () => deliverDue() };

/** Runs one delivery round unless one is already running (here or on another instance). */
export function kickOutbox(): Promise<unknown> {
	return kickJob(outboxJob);
}
