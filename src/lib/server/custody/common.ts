import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { z } from 'zod';
import { ApiProblem, pathId } from '../api';
import type { SessionUser } from '../auth/types';
import { enqueueMail } from '../outbox';
import { config } from '../config';
import { noticeText } from '../mail-templates';
import { facilityName } from '../facility';

export const REQUEST_STATES = ['draft', 'submitted', 'in_review', 'granted', 'declined', 'fulfilled', 'closed', 'withdrawn'] as const;
export type RequestState = (typeof REQUEST_STATES)[number];
export const TRANSFER_STATES = ['prepared', 'dispatched', 'received', 'refused', 'cancelled'] as const;

export const REQUEST_STATE_LABELS: Record<RequestState, string> = {
	draft: 'Draft',
	submitted: 'Submitted',
	in_review: 'In review',
	granted: 'Granted',
	declined: 'Declined',
	fulfilled: 'Fulfilled',
	closed: 'Closed',
	withdrawn: 'Withdrawn'
};

export const MEANING_LABELS = {
	dispatched: 'Dispatched',
	received_intact: 'Received intact',
	received_damaged: 'Received with damage noted',
	refused: 'Refused',
	returned_to_sender: 'Refused shipment back at sender'
} as const;
export type Meaning = keyof typeof MEANING_LABELS;

export const requestNumber = (n: number) => `AR-${String(n).padStart(4, '0')}`;
export const transferNumber = (n: number) => `CT-${String(n).padStart(4, '0')}`;

export const note = (max: number) => z.string({ error: 'must be text' }).trim().max(max, `must be at most ${max} characters`);

export function idOf(text: string, what: string): string {
	return pathId(text, what);
}

/** The addresses of everyone in a role (and, for lab members, of one lab) who should hear of something. */
export async function recipients(sq: Sequelize, t: Transaction, opts: { roles: string[]; labId?: string | null }) {
	const rows = await sq.query<{ email: string }>(
		`SELECT email FROM users WHERE active AND password_hash IS NOT NULL AND role IN (:roles)${opts.labId ? ' AND lab_id = :lab' : ''}`,
		{ type: QueryTypes.SELECT, replacements: { roles: opts.roles, lab: opts.labId ?? null }, transaction: t }
	);
	return rows.map((r) => r.email);
}

/** Queues one notification per recipient in the caller's transaction, with a link into Regolog. */
export async function notify(sq: Sequelize, t: Transaction, to: string[], kind: string, subject: string, lines: string[], path: string) {
	const href = `${config.origin}${path}`;
	if (!to.length) return;
	const text = noticeText(lines, href, await facilityName(sq, t));
	for (const address of to) {
		await enqueueMail(t, {
			to: address,
			subject: `[Regolog] ${subject}`,
			text,
			kind
		});
	}
}

export function forbid(message: string): never {
	throw new ApiProblem(403, 'forbidden', message);
}

export function conflict(message: string, extra?: Record<string, unknown>): never {
	throw new ApiProblem(409, 'conflict', message, undefined, extra);
}

export function isLabMember(u: SessionUser) {
	return u.role === 'lab_member';
}
