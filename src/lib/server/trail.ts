import { createHash, hash as cryptoHash } from 'node:crypto';
import canonicalize from 'canonicalize';
import pg from 'pg';
import { CopyOutQuery, submitCopyOut, type CopyOutParser } from './copy-out';
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';

export const GENESIS_HASH = '0'.repeat(64);

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
 * Values of the event that only the database knows when the statement is sent (a split's children
 * codes, taken from the collection's counter in the same round trip). Each mark is a string that
 * stands in for its value in `before` and `after`; it must occur exactly once in the event's
 * canonical JSON, so a mark should carry a random part nobody else can write. `values` is an SQL
 * expression of type text[] giving the value of marks[i] at position i + 1; each value must need no
 * escaping in JSON (digits, capital letters, hyphens). The INSERT splices the values into the
 * canonical text in place of the marks, and stores before and after as parsed from that text.
 */
export interface TrailFill {
	marks: string[];
	values: string;
	/**
	 * SQL computed before the trail's lock is taken, for a statement that locks rows itself: it must
	 * name those steps here so that, like every other writer, it takes their locks first.
	 */
	after?: string;
}

/** SQL and replacements that append one event; see appendTrail. */
export interface TrailStatement {
	/** the append on its own: one statement, returning trail_seq, trail_prev_hash and trail_hash */
	sql: string;
	/** the same as CTEs, to be part of the WITH of a larger statement… */
	ctes: string;
	/** …whose CTE of this name returns the event's seq, prev_hash and hash */
	returned: string;
	replacements: Record<string, unknown>;
}

/**
 * The statement that appends one event, on its own (appendTrail) or as CTEs of the statement of the
 * change itself, so that the change and its event go in one round trip (prefixed names keep their
 * CTEs and replacements apart).
 *
 * trail_head_locked() (migration 0053) takes an advisory transaction lock that keeps every writer on
 * one chain: the next writer waits there until this transaction ends. Being VOLATILE, it then reads
 * the chain's head with a snapshot of its own, taken once it holds the lock, so it sees the previous
 * writer's event even though the statement around it began earlier. (At READ COMMITTED, PostgreSQL's
 * and Sequelize's default. Under REPEATABLE READ or SERIALIZABLE the transaction's one snapshot
 * could miss that event, and the append would fail on the primary key: the chain is never forked,
 * but the change is refused.)
 *
 * The event's canonical JSON (RFC 8785, by canonicalEvent) is made here; only its seq, which is the
 * head's plus one, is filled in by the INSERT. In RFC 8785 member order the event ends with
 * `"seq":N,"subject":{…}}`, so the body is the text before N, N, and the text after it. The hash,
 * SHA-256 over the previous hash and the body as UTF-8 bytes, is then computed by PostgreSQL's
 * sha256() in the same INSERT. verifyTrail checks every hash with node's own SHA-256, and the trail
 * tests check the two agree.
 */
export function trailStatement(input: TrailInput, name = 'trail', fill?: TrailFill): TrailStatement {
	const row = {
		seq: 0,
		at: new Date(),
		actor_id: input.actor.id,
		actor_label: input.actor.label,
		action: input.action,
		subject_type: input.subjectType,
		subject_id: input.subjectId,
		before: plain(input.before),
		after: plain(input.after)
	};
	const text = canonicalEvent(row);
	const tail = ',"seq":0,"subject":' + canonicalParsed({ id: row.subject_id, type: row.subject_type }) + '}';
	if (!text.endsWith(tail)) throw new Error('trail event: unexpected canonical form');
	const p = (k: string) => `:${name}_${k}`;
	const head = text.slice(0, text.length - tail.length) + ',"seq":';
	const values: Record<string, unknown> = {
		at: row.at, actor_id: row.actor_id, actor_label: row.actor_label, action: row.action, subject_type: row.subject_type, subject_id: row.subject_id,
		before: JSON.stringify(row.before), after: JSON.stringify(row.after),
		head, tail: tail.slice(',"seq":0'.length)
	};
	let headSql = p('head');
	let lateral = '';
	let before = `CAST(${p('before')} AS jsonb)`;
	let after = `CAST(${p('after')} AS jsonb)`;
	if (fill && fill.marks.length) {
		// the head cut at each mark, in the order the marks occur in the text
		const at = fill.marks.map((m, i) => {
			const k = head.indexOf(m);
			if (k < 0 || head.indexOf(m, k + 1) >= 0) throw new Error(`trail event: mark ${i} must occur exactly once in the event`);
			return { i, k, len: m.length };
		});
		at.sort((a, b) => a.k - b.k);
		const parts: string[] = [];
		let from = 0;
		for (const m of at) {
			parts.push(head.slice(from, m.k));
			from = m.k + m.len;
		}
		parts.push(head.slice(from));
		delete values.head;
		parts.forEach((part, j) => (values[`part${j}`] = part));
		headSql = parts.map((_, j) => p(`part${j}`)).reduce((sql, part, j) => (j === 0 ? part : `${sql} || f.v[${at[j - 1].i + 1}] || ${part}`), '');
		lateral = `LATERAL (SELECT CAST(${fill.values} AS text[]) AS v) f`;
		before = `(b.body::jsonb)->'before'`;
		after = `(b.body::jsonb)->'after'`;
	}
	const ctes = `${name}_h AS (SELECT seq, prev FROM trail_head_locked(${fill?.after ?? 'NULL'})),
		${name}_b AS (SELECT ${headSql} || h.seq::text || ${p('tail')} AS body FROM ${name}_h h${lateral ? `, ${lateral}` : ''}),
		${name}_i AS (
			INSERT INTO trail_events (seq, at, actor_id, actor_label, action, subject_type, subject_id, before, after, prev_hash, hash, body)
			SELECT h.seq, CAST(${p('at')} AS timestamptz), CAST(${p('actor_id')} AS uuid), CAST(${p('actor_label')} AS text), CAST(${p('action')} AS text),
			       CAST(${p('subject_type')} AS text), CAST(${p('subject_id')} AS text),
			       ${before}, ${after}, h.prev, encode(sha256(convert_to(h.prev || b.body, 'UTF8')), 'hex'), b.body
			FROM ${name}_h h, ${name}_b b
			RETURNING seq, prev_hash, hash)`;
	const sql = `WITH ${ctes}
		SELECT seq AS trail_seq, prev_hash AS trail_prev_hash, hash AS trail_hash FROM ${name}_i`;
	const replacements: Record<string, unknown> = {};
	for (const [k, v] of Object.entries(values)) replacements[`${name}_${k}`] = v;
	return { sql, ctes, returned: `${name}_i`, replacements };
}

/** Reads the appended event from the rows of a query that ran a trailStatement. */
export function trailRowOf(rows: Record<string, unknown>[]): { seq: number; prevHash: string; hash: string } {
	const r = rows.find((x) => x.trail_hash !== undefined);
	if (!r) throw new Error('the trail event was not appended');
	return { seq: Number(r.trail_seq), prevHash: String(r.trail_prev_hash), hash: String(r.trail_hash) };
}

/** Appends one event inside the caller's transaction, in one round trip (see trailStatement). */
export async function appendTrail(sequelize: Sequelize, t: Transaction, input: TrailInput): Promise<{ seq: number; prevHash: string; hash: string }> {
	const { sql, replacements } = trailStatement(input);
	const rows = await sequelize.query<Record<string, unknown>>(sql, { type: QueryTypes.SELECT, transaction: t, replacements });
	return trailRowOf(rows);
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
 * The verification stream, one tuple per event, in PostgreSQL's binary COPY format: 0 seq; 1 hash;
 * 2 whether the columns still say what the body says; 3 prev_hash || body, the exact bytes the hash
 * covers, in one field (joined by PostgreSQL, which has a core to spare while node checks); 4 NULL,
 * except for an event written before bodies were stored (body NULL) or whose prev_hash is not 64
 * characters long, which gets its prev_hash and columns as one JSON array for canonicalRawRow. `matches` is the
 * stored generated column body_matches (migration 0031), which the database recomputes on every
 * write of the row; when its definition is not intact the same comparison is made in this query
 * instead, row by row (slower, same findings).
 */
const verifyCopy = (matches: string, lo: number, hi: number, physical: boolean) => `COPY (SELECT seq, hash, ${matches}, prev_hash || coalesce(body, ''),
	CASE WHEN body IS NULL OR octet_length(prev_hash) <> 64 THEN
		json_build_array(prev_hash, ${AT_ISO}, actor_id, actor_label, action, subject_type, subject_id, before, after)::text END
	FROM trail_events WHERE seq BETWEEN ${lo} AND ${hi}${physical ? '' : ' ORDER BY seq'}) TO STDOUT (FORMAT binary)`;
const VERIFY_FIELDS = 5;
const BODY_MATCHES_EXPR = 'trail_body_matches(body, seq, at, actor_id, actor_label, action, subject_type, subject_id, before, after)';
/** Is body_matches still a stored column generated by trail_body_matches? */
const GENERATED_CHECK = `SELECT a.attgenerated = 's' AND pg_get_expr(d.adbin, d.adrelid) LIKE '${BODY_MATCHES_EXPR}' AS intact
	FROM pg_attribute a JOIN pg_attrdef d ON d.adrelid = a.attrelid AND d.adnum = a.attnum
	WHERE a.attrelid = 'trail_events'::regclass AND a.attname = 'body_matches'`;
const sha256hex: (data: string | Buffer) => string =
	typeof cryptoHash === 'function' ? (data) => cryptoHash('sha256', data, 'hex') : (data) => createHash('sha256').update(data).digest('hex');

/** Are the bytes buf[from, to) the characters of `text` (hex digits here), one byte each? No string is made. */
function bytesAre(buf: Buffer, from: number, to: number, text: string): boolean {
	if (to - from !== text.length) return false;
	for (let i = 0; i < text.length; i++) if (buf[from + i] !== text.charCodeAt(i)) return false;
	return true;
}

interface RangeResult {
	/** read in physical order, an event came out of seq order: read the range again in seq order */
	outOfOrder?: true;
	/** prev_hash of the range's first event (null when it has none) */
	firstPrev: string | null;
	/** hash of the range's last event verified */
	lastHash: string | null;
	broken: { at: number; reason: string } | null;
}

function connect(sequelize: Sequelize): pg.Client {
	const c = sequelize.config;
	return new pg.Client({ host: c.host, port: Number(c.port), user: c.username, password: c.password ?? undefined, database: c.database });
}

/**
 * Verifies events lo…hi as one binary COPY stream on a connection of its own. The first range
 * starts from the genesis hash; any other takes its first event's prev_hash as given, and the
 * caller checks it against the end of the range before. `physical`: read in the table's physical
 * order (a plain sequential scan, much cheaper for PostgreSQL than walking the index), which for an
 * append-only table is seq order; at the first event out of that order it gives up with
 * `outOfOrder`, and the caller reads the range again in seq order.
 */
async function verifyRange(sequelize: Sequelize, matches: string, lo: number, hi: number, physical = false): Promise<RangeResult> {
	const client = connect(sequelize);
	await client.connect();
	let q: CopyOutQuery | null = null;
	try {
		// the previous event's hash: known from the start for the first range; any other takes its
		// first event's prev_hash as given
		let prev = GENESIS_HASH;
		let havePrev = lo === 1;
		let firstPrev: string | null = null;
		let expectSeq = lo;
		let broken: RangeResult['broken'] = null;
		let outOfOrder = false;
		const stop = (reason: string): false => {
			broken = { at: expectSeq, reason };
			return false;
		};
		const onTuple = (buf: Buffer, r: CopyOutParser) => {
			const { start, end } = r;
			const seq = buf.readUInt32BE(start[0]) * 4294967296 + buf.readUInt32BE(start[0] + 4);
			if (seq !== expectSeq) {
				if (physical) {
					outOfOrder = true;
					return false;
				}
				return stop(`event ${expectSeq} is missing`);
			}
			if (start[4] >= 0) {
				// an older event (or an odd prev_hash): its prev_hash and columns come as a JSON array
				const legacy = JSON.parse(buf.toString('utf8', start[4], end[4])) as (string | null)[];
				const prevHash = legacy[0]!;
				if (firstPrev === null) {
					firstPrev = prevHash;
					if (!havePrev) prev = prevHash;
					havePrev = true;
				}
				if (prevHash !== prev) return stop('link to the previous event does not match');
				if (start[2] >= 0 && buf[start[2]] === 0) return stop('content does not match its hash');
				const [, at, actorId, actorLabel, action, subjectType, subjectId, before, after] = legacy;
				const json = (v: unknown) => (v === null ? null : JSON.stringify(v));
				const digest = sha256hex(prevHash + canonicalRawRow([String(seq), at!, actorId, actorLabel!, action!, subjectType!, subjectId!, json(before), json(after), prevHash, '']));
				if (buf.toString('latin1', start[1], end[1]) !== digest) return stop('content does not match its hash');
				prev = digest;
				expectSeq++;
				return true;
			}
			// prev_hash is 64 bytes here: the first 64 of prev_hash || body
			const ps = start[3];
			if (firstPrev === null) {
				firstPrev = buf.toString('latin1', ps, ps + 64);
				if (!havePrev) prev = firstPrev;
				havePrev = true;
			}
			// the link: prev_hash is the previous event's hash
			if (!bytesAre(buf, ps, ps + 64, prev)) return stop('link to the previous event does not match');
			// 0: the columns no longer say what the hashed body says
			if (start[2] >= 0 && buf[start[2]] === 0) return stop('content does not match its hash');
			// the bytes prev_hash || body, hashed where they lie in the stream
			const digest = sha256hex(buf.subarray(ps, end[3]));
			if (!bytesAre(buf, start[1], end[1], digest)) return stop('content does not match its hash');
			prev = digest;
			expectSeq++;
			return true;
		};
		// JIT compiling this one scan's expressions costs more than it saves
		await client.query('SET jit = off');
		q = new CopyOutQuery(verifyCopy(matches, lo, hi, physical), VERIFY_FIELDS, onTuple);
		submitCopyOut(client, q);
		await q.done;
		if (outOfOrder) return { outOfOrder, firstPrev: null, lastHash: null, broken: null };
		if (!broken && !q.parser.ended) throw new Error('the trail stream ended early');
		if (!broken && expectSeq <= hi) stop(`event ${expectSeq} is missing`);
		return { firstPrev, lastHash: expectSeq > lo ? prev : null, broken };
	} finally {
		// stopping part-way through a COPY leaves the connection mid-protocol: close it outright
		if (q && !q.parser?.finished) q.abandon();
		await client.end().catch(() => {});
	}
}


/**
 * Walks the chain in seq order and reports the first event that is missing, whose link to the
 * previous event does not hold, or whose content does not match its hash (DESIGN.md §3.9).
 *
 * An event with a stored body is checked by hashing the previous hash and the body, and by the
 * database's comparison of the body with the columns (body_matches), so a column changed behind
 * the trail's back is still found at its own event. An event without a body (written before bodies
 * were stored) has its canonical JSON rebuilt from the columns by canonicalRawRow.
 *
 * The chain comes as binary COPY streams read straight off the socket (copy-out.ts: no per-row
 * objects), and each event's bytes are hashed and compared where they lie, with no text decoding. It is read in the table's
 * physical order, which for this append-only table is seq order, and read again in seq order
 * through the index if an event is out of place (see verifyRange).
 *
 * Every check of event n involves only events n − 1 and n, so the chain can also be read as
 * consecutive ranges at once (`ranges`, 1 by default): each range is checked on its own, and where
 * two meet, the first event of the later range must link to the last of the earlier one. On two
 * cores one stream is as fast (the checking process is the bottleneck), so that is left to
 * the tests, which use it to check the joins.
 */
export async function verifyTrail(sequelize: Sequelize, opts: { ranges?: number } = {}): Promise<VerifyResult> {
	const client = connect(sequelize);
	await client.connect();
	let matches: string;
	let last: number;
	try {
		const check = await client.query<{ intact: boolean }>(GENERATED_CHECK);
		matches = check.rows[0]?.intact === true ? 'body_matches' : BODY_MATCHES_EXPR;
		const head = await client.query<{ seq: string | null }>('SELECT max(seq)::text AS seq FROM trail_events');
		last = Number(head.rows[0]?.seq ?? 0);
	} finally {
		await client.end().catch(() => {});
	}
	if (last === 0) return { ok: true, events: 0, firstBrokenAt: null };
	const k = Math.max(1, Math.min(opts.ranges ?? 1, last));
	const bounds = Array.from({ length: k }, (_, i) => [Math.floor((i * last) / k) + 1, Math.floor(((i + 1) * last) / k)] as const);
	const parts = await Promise.all(
		bounds.map(async ([lo, hi]) => {
			// one range: physical order first (see verifyRange); several: each walks the index
			const r = k === 1 ? await verifyRange(sequelize, matches, lo, hi, true) : null;
			return r && !r.outOfOrder ? r : verifyRange(sequelize, matches, lo, hi);
		})
	);
	const broken = (at: number, reason: string): VerifyResult => ({ ok: false, events: at - 1, firstBrokenAt: at, reason });
	for (let i = 0; i < k; i++) {
		const [lo] = bounds[i];
		const p = parts[i];
		if (p.broken && p.broken.at === lo && p.firstPrev === null) return broken(lo, p.broken.reason);
		if (i > 0 && p.firstPrev !== parts[i - 1].lastHash) return broken(lo, 'link to the previous event does not match');
		if (p.broken) return broken(p.broken.at, p.broken.reason);
	}
	return { ok: true, events: last, firstBrokenAt: null };
}
