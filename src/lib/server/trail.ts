import { createHash, hash as cryptoHash } from 'node:crypto';
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

/** A signed-in person as the trail names them. */
export function actorOf(u: { id: string; email: string }): TrailActor {
	return { id: u.id, label: u.email };
}

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
 * writer on one chain: the next writer waits until this transaction ends, and then reads the
 * chain's head afresh. That needs the caller's transaction at READ COMMITTED (PostgreSQL's and
 * Sequelize's default): under REPEATABLE READ or SERIALIZABLE a snapshot taken before the lock
 * could miss the previous writer's event, and the append would fail on the primary key (the chain
 * is never forked, but the change is refused).
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
	const body = canonicalEvent(row);
	const hash = chainHash(prev, body);
	await sequelize.query(
		`INSERT INTO trail_events (seq, at, actor_id, actor_label, action, subject_type, subject_id, before, after, prev_hash, hash, body)
		 VALUES (:seq, :at, :actor_id, :actor_label, :action, :subject_type, :subject_id,
		         CAST(:before AS jsonb), CAST(:after AS jsonb), :prev, :hash, :body)`,
		{
			replacements: { ...row, before: JSON.stringify(row.before), after: JSON.stringify(row.after), prev, hash, body },
			transaction: t
		}
	);
	return { ...row, prev_hash: prev, hash };
}

export interface VerifyResult {
	ok: boolean;
	/** events verified intact: all of them when ok, otherwise those before the first broken one */
	events: number;
	/** seq of the first event whose link, content or presence does not hold; null when ok */
	firstBrokenAt: number | null;
	reason?: string;
}

/**
 * RFC 8785 canonical JSON of a value that came out of JSON.parse (so: null, booleans, finite
 * numbers, strings without lone surrogates, arrays and plain objects). Same text as the
 * `canonicalize` package gives for such values: strings and numbers are serialised by
 * JSON.stringify (ECMAScript, which RFC 8785 §3.2.2 adopts), member names sorted by UTF-16 code
 * units (RFC 8785 §3.2.3, the default order of Array.prototype.sort). The trail test checks the two
 * agree on arbitrary JSON. It exists because it is several times faster on the verification path.
 */
export function canonicalParsed(v: unknown): string {
	if (v === null) return 'null';
	switch (typeof v) {
		case 'string':
			return JSON.stringify(v);
		case 'number':
			if (!Number.isFinite(v)) throw new Error(`${v} has no JSON form`);
			return JSON.stringify(v);
		case 'boolean':
			return v ? 'true' : 'false';
		case 'object':
			break;
		default:
			throw new Error(`a ${typeof v} has no JSON form`);
	}
	if (Array.isArray(v)) {
		let out = '[';
		for (let i = 0; i < v.length; i++) out += (i ? ',' : '') + canonicalParsed(v[i]);
		return out + ']';
	}
	const o = v as Record<string, unknown>;
	const keys = Object.keys(o).sort();
	let out = '{';
	for (let i = 0; i < keys.length; i++) out += (i ? ',' : '') + JSON.stringify(keys[i]) + ':' + canonicalParsed(o[keys[i]]);
	return out + '}';
}

/** A stored row as verification reads it: every column as text, `at` already in ISO 8601 UTC. */
export type RawRow = [seq: string, at: string, actorId: string | null, actorLabel: string, action: string, subjectType: string, subjectId: string, before: string | null, after: string | null, prevHash: string, hash: string];

/**
 * canonicalEvent for a row read as text: the same members in RFC 8785 order (action, actor, after,
 * at, before, seq, subject), so the same text as canonicalEvent gives for the parsed row.
 */
export function canonicalRawRow(r: RawRow): string {
	return (
		'{"action":' + JSON.stringify(r[4]) +
		',"actor":{"id":' + (r[2] === null ? 'null' : JSON.stringify(r[2])) + ',"label":' + JSON.stringify(r[3]) +
		'},"after":' + (r[8] === null ? 'null' : canonicalParsed(JSON.parse(r[8]))) +
		',"at":' + JSON.stringify(r[1]) +
		',"before":' + (r[7] === null ? 'null' : canonicalParsed(JSON.parse(r[7]))) +
		',"seq":' + JSON.stringify(Number(r[0])) +
		',"subject":{"id":' + JSON.stringify(r[6]) + ',"type":' + JSON.stringify(r[5]) + '}}'
	);
}

// `at` as toISOString() writes it. to_char's MS truncates the microseconds as the driver's Date does.
const AT_ISO = `to_char(at AT TIME ZONE 'UTC', 'YYYY-MM-DD"T"HH24:MI:SS.MS"Z"')`;

/**
 * One verification row: seq, prev_hash, hash, body, whether the columns still say what the body
 * says, and, only for events written before bodies were stored (body NULL), the columns as text
 * for canonicalRawRow. `matches` is the stored generated column body_matches (migration 0031),
 * which the database recomputes on every write of the row; when its definition is not intact the
 * same comparison is made in this query instead, row by row (slower, same findings).
 */
const verifySelect = (matches: string) => `SELECT seq, prev_hash, hash, body, ${matches},
	       CASE WHEN body IS NULL THEN ${AT_ISO} END, CASE WHEN body IS NULL THEN actor_id END,
	       CASE WHEN body IS NULL THEN actor_label END, CASE WHEN body IS NULL THEN action END,
	       CASE WHEN body IS NULL THEN subject_type END, CASE WHEN body IS NULL THEN subject_id END,
	       CASE WHEN body IS NULL THEN before END, CASE WHEN body IS NULL THEN after END
	FROM trail_events WHERE seq >= $1 ORDER BY seq LIMIT $2`;
const VERIFY_SELECT = verifySelect('body_matches');
const VERIFY_SELECT_RECOMPUTED = verifySelect('trail_body_matches(body, seq, at, actor_id, actor_label, action, subject_type, subject_id, before, after)');
/** Is body_matches still a stored column generated by trail_body_matches? */
const GENERATED_CHECK = `SELECT a.attgenerated = 's' AND pg_get_expr(d.adbin, d.adrelid) LIKE 'trail_body_matches(body, seq, at, actor_id, actor_label, action, subject_type, subject_id, before, after)' AS intact
	FROM pg_attribute a JOIN pg_attrdef d ON d.adrelid = a.attrelid AND d.adnum = a.attnum
	WHERE a.attrelid = 'trail_events'::regclass AND a.attname = 'body_matches'`;
type VerifyRow = [seq: string, prevHash: string, hash: string, body: string | null, same: string | null,
	at: string | null, actorId: string | null, actorLabel: string | null, action: string | null, subjectType: string | null,
	subjectId: string | null, before: string | null, after: string | null];
const AS_TEXT = { getTypeParser: () => (text: string) => text };
const sha256hex: (data: string) => string =
	typeof cryptoHash === 'function' ? (data) => cryptoHash('sha256', data, 'hex') : (data) => createHash('sha256').update(data).digest('hex');

/** The canonical text an event's hash covers: its stored body, or for an older event its columns. */
function hashedText(r: VerifyRow): string {
	if (r[3] !== null) return r[3];
	return canonicalRawRow([r[0], r[5]!, r[6], r[7]!, r[8]!, r[9]!, r[10]!, r[11], r[12], r[1], r[2]]);
}

interface RawConnection {
	query(q: { text: string; values: unknown[]; rowMode: 'array'; types: typeof AS_TEXT }): Promise<{ rows: VerifyRow[] }>;
}

/**
 * Walks the chain in seq order and reports the first event that is missing, whose link to the
 * previous event does not hold, or whose content does not match its hash (DESIGN.md §3.9).
 *
 * Every check of event n involves only events n − 1 and n, so the result is the same however the
 * rows are fetched. An event with a stored body is checked by hashing the previous hash and the
 * body, and by the database's comparison of the body with the columns (VERIFY_SELECT), so a column
 * changed behind the trail's back is still found at its own event. An event without a body (written
 * before bodies were stored) has its canonical JSON rebuilt from the columns by canonicalRawRow.
 * For speed it reads with keyset pagination (seq ≥ next) in large batches on one connection of its
 * own, asks for the next batch before checking the current one, and takes the columns as text.
 */
export async function verifyTrail(sequelize: Sequelize, batch = 20_000): Promise<VerifyResult> {
	if (!Number.isInteger(batch) || batch < 1) throw new RangeError('batch must be a positive integer');
	const manager = sequelize.connectionManager;
	const conn = (await manager.getConnection({ type: 'read' })) as unknown as RawConnection;
	let select: string;
	try {
		const check = await (conn as unknown as { query(t: string): Promise<{ rows: { intact: boolean }[] }> }).query(GENERATED_CHECK);
		select = check.rows[0]?.intact === true ? VERIFY_SELECT : VERIFY_SELECT_RECOMPUTED;
	} catch (e) {
		manager.releaseConnection(conn as never);
		throw e;
	}
	const fetch = (from: number) => conn.query({ text: select, values: [from, batch], rowMode: 'array', types: AS_TEXT }).then((r) => r.rows);
	let next: Promise<VerifyRow[]> | null = fetch(1);
	try {
		let prev = GENESIS_HASH;
		let expectSeq = 1;
		const broken = (reason: string): VerifyResult => ({ ok: false, events: expectSeq - 1, firstBrokenAt: expectSeq, reason });
		while (next) {
			const rows: VerifyRow[] = await next;
			// a full batch: ask for the next one now, so the database works while this one is checked
			next = rows.length === batch ? fetch(Number(rows[rows.length - 1][0]) + 1) : null;
			for (const r of rows) {
				if (Number(r[0]) !== expectSeq) return broken(`event ${expectSeq} is missing`);
				if (r[1] !== prev) return broken('link to the previous event does not match');
				// 'f': the columns no longer say what the hashed body says
				if (r[4] === 'f' || sha256hex(prev + hashedText(r)) !== r[2]) return broken('content does not match its hash');
				prev = r[2];
				expectSeq++;
			}
		}
		return { ok: true, events: expectSeq - 1, firstBrokenAt: null };
	} finally {
		// a batch asked for ahead is waited for, so the connection goes back to the pool idle
		await (next as Promise<VerifyRow[]> | null)?.catch(() => {});
		manager.releaseConnection(conn as never);
	}
}
