// Appending to the trail: the event's canonical JSON, its hash, and the statement that appends it.
import { createHash } from 'node:crypto';
import canonicalize from 'canonicalize';
import { QueryTypes, type Sequelize, type Transaction } from 'sequelize';
import { canonicalParsed, GENESIS_HASH } from '../../domain/trail-verify';

export { GENESIS_HASH };

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
 * The append itself is trail_append() (migration 0080), the one way the app's role can add an
 * event: it runs with the owner's rights, takes the append lock through trail_head_locked()
 * (migration 0053), links the event to the head, computes its hash and refuses an event whose body
 * does not say what its columns say. trail_head_locked() takes an advisory transaction lock that
 * keeps every writer on one chain: the next writer waits there until this transaction ends. Being
 * VOLATILE, it then reads the chain's head with a snapshot of its own, taken once it holds the
 * lock, so it sees the previous writer's event even though the statement around it began earlier.
 * (At READ COMMITTED, PostgreSQL's and Sequelize's default. Under REPEATABLE READ or SERIALIZABLE
 * the transaction's one snapshot could miss that event, and the append would fail on the primary
 * key: the chain is never forked, but the change is refused.) A function's arguments are computed
 * before it runs, so `fill.after`, passed as its first argument, takes its locks first.
 *
 * The event's canonical JSON (RFC 8785, by canonicalEvent) is made here; only its seq, which is the
 * head's plus one, is filled in by the function. In RFC 8785 member order the event ends with
 * `"seq":N,"subject":{…}}`, so the body is the text before N, N, and the text after it. The hash,
 * SHA-256 over the previous hash and the body as UTF-8 bytes, is computed by PostgreSQL's sha256()
 * in the same call. verifyTrail checks every hash with node's own SHA-256, and the trail tests
 * check the two agree.
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
	const before = `CAST(${p('before')} AS jsonb)`;
	const after = `CAST(${p('after')} AS jsonb)`;
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
		delete values.before;
		delete values.after;
	}
	const filled = Boolean(lateral);
	const ctes = `${name}_b AS (SELECT ${headSql} AS head${lateral ? ` FROM ${lateral}` : ''}),
		${name}_i AS (
			SELECT a.trail_seq AS seq, a.trail_prev_hash AS prev_hash, a.trail_hash AS hash
			FROM ${name}_b b, trail_append(${fill?.after ?? 'NULL'}, b.head, ${p('tail')}, CAST(${p('at')} AS timestamptz), CAST(${p('actor_id')} AS uuid),
			     CAST(${p('actor_label')} AS text), CAST(${p('action')} AS text), CAST(${p('subject_type')} AS text), CAST(${p('subject_id')} AS text),
			     ${filled ? 'NULL' : before}, ${filled ? 'NULL' : after}, ${filled}) a)`;
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

/** Called after the commit of an event whose seq is a multiple of 1,000 (the checkpoint job listens). */
let onMilestone: ((seq: number) => void) | null = null;
export function onTrailMilestone(fn: ((seq: number) => void) | null): void {
	onMilestone = fn;
}

/** Appends one event inside the caller's transaction, in one round trip (see trailStatement). */
export async function appendTrail(sequelize: Sequelize, t: Transaction, input: TrailInput): Promise<{ seq: number; prevHash: string; hash: string }> {
	const { sql, replacements } = trailStatement(input);
	const rows = await sequelize.query<Record<string, unknown>>(sql, { type: QueryTypes.SELECT, transaction: t, replacements });
	const r = trailRowOf(rows);
	if (onMilestone && r.seq % 1000 === 0) {
		const fn = onMilestone;
		t.afterCommit(() => fn(r.seq));
	}
	return r;
}

