import { createHash } from 'node:crypto';
import canonicalize from 'canonicalize';
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';

export const GENESIS_HASH = '0'.repeat(64);
const TRAIL_LOCK = 0x7261696c; // advisory lock key for appends ("rail")

export interface TrailActor {
	id: string | null;
	label: string;
}

export interface TrailInput {
	actor: TrailActor;
	action: string;
	subjectType: string;
	subjectId: string;
	before?: unknown;
	after?: unknown;
}

export interface TrailRow {
	seq: number;
	at: Date;
	actor_id: string | null;
	actor_label: string;
	action: string;
	subject_type: string;
	subject_id: string;
	before: unknown;
	after: unknown;
	prev_hash: string;
	hash: string;
}

export const SYSTEM_ACTOR: TrailActor = { id: null, label: 'system' };

/** RFC 8785 canonical JSON of an event's content (everything but the hashes). */
export function canonicalEvent(e: Omit<TrailRow, 'prev_hash' | 'hash'>): string {
	const text = canonicalize({
		seq: Number(e.seq),
		at: new Date(e.at).toISOString(),
		actor: { id: e.actor_id, label: e.actor_label },
		action: e.action,
		subject: { type: e.subject_type, id: e.subject_id },
		before: e.before ?? null,
		after: e.after ?? null
	});
	if (text === undefined) throw new Error('trail event cannot be canonicalized');
	return text;
}

/** SHA-256 (FIPS 180-4) over the previous hash and the event's canonical JSON. */
export function chainHash(prevHash: string, canonical: string): string {
	return createHash('sha256').update(prevHash).update(canonical).digest('hex');
}

/** Drops undefined values and turns Dates into ISO text, so the stored JSON is what was hashed. */
function plain(v: unknown): unknown {
	return v === undefined ? null : JSON.parse(JSON.stringify(v));
}

/**
 * Appends one event inside the caller's transaction. An advisory transaction lock keeps every
 * writer on one chain: the next writer waits until this transaction ends.
 */
export async function appendTrail(sequelize: Sequelize, t: Transaction, input: TrailInput): Promise<TrailRow> {
	await sequelize.query('SELECT pg_advisory_xact_lock(:k)', { replacements: { k: TRAIL_LOCK }, transaction: t });
	const last = await sequelize.query<{ seq: number; hash: string }>(
		'SELECT seq, hash FROM trail_events ORDER BY seq DESC LIMIT 1',
		{ type: QueryTypes.SELECT, transaction: t }
	);
	const seq = last.length ? Number(last[0].seq) + 1 : 1;
	const prev = last.length ? last[0].hash : GENESIS_HASH;
	const row = {
		seq,
		at: new Date(),
		actor_id: input.actor.id,
		actor_label: input.actor.label,
		action: input.action,
		subject_type: input.subjectType,
		subject_id: input.subjectId,
		before: plain(input.before),
		after: plain(input.after)
	};
	const hash = chainHash(prev, canonicalEvent(row));
	await sequelize.query(
		`INSERT INTO trail_events (seq, at, actor_id, actor_label, action, subject_type, subject_id, before, after, prev_hash, hash)
		 VALUES (:seq, :at, :actor_id, :actor_label, :action, :subject_type, :subject_id,
		         CAST(:before AS jsonb), CAST(:after AS jsonb), :prev, :hash)`,
		{
			replacements: { ...row, before: JSON.stringify(row.before), after: JSON.stringify(row.after), prev, hash },
			transaction: t
		}
	);
	return { ...row, prev_hash: prev, hash };
}

export interface VerifyResult {
	ok: boolean;
	events: number;
	firstBrokenAt: number | null;
	reason?: string;
}

/** Walks the chain in order and reports the first event whose link or hash does not hold. */
export async function verifyTrail(sequelize: Sequelize, batch = 5000): Promise<VerifyResult> {
	let prev = GENESIS_HASH;
	let expectSeq = 1;
	let count = 0;
	for (;;) {
		const rows = await sequelize.query<TrailRow>(
			`SELECT seq, at, actor_id, actor_label, action, subject_type, subject_id, before, after, prev_hash, hash
			 FROM trail_events WHERE seq >= :from ORDER BY seq LIMIT :batch`,
			{ type: QueryTypes.SELECT, replacements: { from: expectSeq, batch } }
		);
		if (rows.length === 0) break;
		for (const r of rows) {
			const seq = Number(r.seq);
			if (seq !== expectSeq) return { ok: false, events: count, firstBrokenAt: expectSeq, reason: `event ${expectSeq} is missing` };
			if (r.prev_hash !== prev) return { ok: false, events: count, firstBrokenAt: seq, reason: 'link to the previous event does not match' };
			if (chainHash(prev, canonicalEvent(r)) !== r.hash) return { ok: false, events: count, firstBrokenAt: seq, reason: 'content does not match its hash' };
			prev = r.hash;
			expectSeq++;
			count++;
		}
	}
	return { ok: true, events: count, firstBrokenAt: null };
}
