import { QueryTypes, type Sequelize } from 'sequelize';
import { labFilter } from '../auth/scope';
import { findItem, type ItemRow, type Who } from './common';
import type pg from 'pg';
import { preparedRead, withPooledConnection } from '../prepared';
import { CopyOutQuery, submitCopyOut } from '../copy-out';
import { countQuery } from '../db';

/**
 * Lineages already computed, by item, depth and lab, with the collection's lineage_version they
 * were computed at (migration 0051): while the version is unchanged the answer is the same, so it
 * is served again without a query. Least recently used first out, within a byte budget.
 */
const CACHE_BYTES = Number(process.env.REGOLOG_LINEAGE_CACHE_MB ?? 64) * 1024 * 1024;
const cache = new Map<string, { version: number; body: Buffer }>();
let cachedBytes = 0;

function remember(key: string, version: number, body: Buffer): void {
	const old = cache.get(key);
	if (old) {
		cache.delete(key);
		cachedBytes -= old.body.length;
	}
	if (body.length > CACHE_BYTES) return;
	cache.set(key, { version, body });
	cachedBytes += body.length;
	for (const [k, v] of cache) {
		if (cachedBytes <= CACHE_BYTES) break;
		cache.delete(k);
		cachedBytes -= v.body.length;
	}
}

/**
 * The lineage of an item below the root, in one recursive query. Ancestors come up the parent links
 * one row per step (there are few). Descendants come down one level per step (`lv`): the next
 * level is one range of items_tree_level_idx (same tree, depth + 1, migrations 0054 and 0055) joined
 * by hash with the level above. Every item carries its entry's JSON text, kept by the database
 * (lineage_entry, migration 0055: everything but the level, which depends on where the lineage
 * starts), and each step joins its level's entries in serial order with the level between them, so
 * nothing is put together per item here. Lab members see only the entries their lab holds; the rest
 * are counted as withheld.
 *
 * The answer comes as one row per level (0: the ancestors), and lineageBytes joins them: PostgreSQL
 * takes several times longer to join a megabyte of text with || than to send it in pieces.
 */
const LINEAGE_SQL = `WITH RECURSIVE up AS (
		SELECT id, parent_id, holder_lab_id, lineage_entry, 0 AS level FROM items WHERE id = :id
		UNION ALL
		SELECT p.id, p.parent_id, p.holder_lab_id, p.lineage_entry, up.level - 1
		FROM items p JOIN up ON p.id = up.parent_id
	), lv AS (
		SELECT 0 AS level, i.depth, i.root_id, ARRAY[i.id] AS ids, NULL::text AS entries, 0::bigint AS withheld
		FROM items i WHERE i.id = :id
		UNION ALL
		SELECT lv.level + 1, lv.depth + 1, lv.root_id, n.ids, n.entries, n.withheld
		FROM lv, LATERAL (
			SELECT array_agg(c.id) AS ids,
			       string_agg(c.lineage_entry, ',"level":' || (lv.level + 1) || '},' ORDER BY c.serial)
			              FILTER (WHERE CAST(:lab AS uuid) IS NULL OR c.holder_lab_id = CAST(:lab AS uuid)) AS entries,
			       count(*) FILTER (WHERE CAST(:lab AS uuid) IS NOT NULL AND c.holder_lab_id IS DISTINCT FROM CAST(:lab AS uuid)) AS withheld
			FROM items c
			JOIN unnest(lv.ids) AS p (id) ON c.parent_id = p.id
			WHERE c.root_id = lv.root_id AND c.depth = lv.depth + 1
		) n
		WHERE cardinality(lv.ids) > 0 AND (CAST(:depth AS int) IS NULL OR lv.level < CAST(:depth AS int))
	)
	SELECT 0 AS level,
		(SELECT string_agg(lineage_entry || ',"level":' || level || '}', ',' ORDER BY level) FROM up
		 WHERE level < 0 AND (CAST(:lab AS uuid) IS NULL OR holder_lab_id = CAST(:lab AS uuid))) AS entries,
		(SELECT count(*) FROM up WHERE level < 0 AND CAST(:lab AS uuid) IS NOT NULL AND holder_lab_id IS DISTINCT FROM CAST(:lab AS uuid)) AS withheld,
		(SELECT lineage_version FROM collections WHERE id = CAST(:collection AS uuid)) AS version
	UNION ALL
	SELECT level, entries, withheld, NULL FROM lv WHERE level > 0`;

/**
 * The lineage of a tree's root (a parent specimen, or a blank on its own): it has no ancestors, and
 * its descendants are its whole tree, every item with its root_id below depth 0, at their own depth
 * as level. So no walk is needed: one range of items_tree_level_idx (migration 0055), read in
 * (depth, serial) order, gives the tree in the lineage's order, and each level's entries are joined
 * as they come (an ordered subquery, which PostgreSQL's aggregates consume in that order; the
 * lineage tests compare every level's order with the tree worked out from the items table).
 *
 * Where one tree is most of the table, the planner would rather scan the table and sort a megabyte
 * of entries, several times slower than reading the index in order: rootLevels forbids both for
 * this statement alone (SET LOCAL in a transaction of its own).
 *
 * It is read as binary COPY (copy-out.ts), so each level's text arrives as the UTF-8 bytes that go
 * into the answer, with no decoding into JavaScript strings and back (for a tree of 10,000 items
 * that decoding cost more than the query). COPY takes no parameters: the values are checked UUIDs
 * and integers, written into the statement.
 */
const rootLineageCopy = (id: string, depth: number | null, lab: string | null, collection: string) => {
	const labSql = lab === null ? 'NULL::uuid' : `${uuidLiteral(lab)}::uuid`;
	return `COPY (SELECT 0 AS level, NULL::text AS entries, 0::bigint AS withheld,
		(SELECT lineage_version FROM collections WHERE id = ${uuidLiteral(collection)}::uuid) AS version
	UNION ALL
	SELECT level,
	       string_agg(lineage_entry, sep) FILTER (WHERE ${labSql} IS NULL OR holder_lab_id = ${labSql}),
	       count(*) FILTER (WHERE ${labSql} IS NOT NULL AND holder_lab_id IS DISTINCT FROM ${labSql}),
	       NULL
	FROM (SELECT depth AS level, ',"level":' || depth || '},' AS sep, lineage_entry, holder_lab_id FROM items
	      WHERE root_id = ${uuidLiteral(id)}::uuid AND depth BETWEEN 1 AND ${depth === null ? 2147483647 : intLiteral(depth)}
	      ORDER BY depth, serial) tree
	GROUP BY level) TO STDOUT (FORMAT binary)`;
};
const ROOT_PLAN = 'BEGIN READ ONLY; SET LOCAL enable_seqscan = off; SET LOCAL enable_sort = off';

const UUID = /^[0-9a-f]{8}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{4}-[0-9a-f]{12}$/i;
function uuidLiteral(v: string): string {
	if (!UUID.test(v)) throw new Error(`not a UUID: ${JSON.stringify(v)}`);
	return `'${v}'`;
}
function intLiteral(v: number): string {
	if (!Number.isSafeInteger(v)) throw new Error(`not an integer: ${v}`);
	return String(v);
}

/** One level of a lineage as read: level 0 is the ancestors; entries end before their last level. */
interface Level {
	level: number;
	entries: Buffer | null;
	withheld: number;
	version: number | null;
}

/** A root's lineage levels (rootLineageCopy), read off a connection of Sequelize's pool as binary COPY. */
async function rootLevels(sq: Sequelize, id: string, depth: number | null, lab: string | null, collection: string): Promise<Level[]> {
	const levels: Level[] = [];
	const q = new CopyOutQuery(rootLineageCopy(id, depth, lab, collection), 4, (buf, { start, end }) => {
		levels.push({
			level: buf.readInt32BE(start[0]),
			// the bytes where they arrived (socket chunks are not reused), copied once into the answer
			entries: start[1] < 0 ? null : buf.subarray(start[1], end[1]),
			withheld: Number(buf.readBigInt64BE(start[2])),
			version: start[3] < 0 ? null : Number(buf.readBigInt64BE(start[3]))
		});
		return true;
	});
	countQuery();
	await withPooledConnection(sq, async (connection) => {
		let began = false;
		try {
			await connection.query(ROOT_PLAN);
			began = true;
			submitCopyOut(connection as pg.Client, q);
			await q.done;
			if (!q.parser.ended) throw new Error('the lineage stream ended early');
			await connection.query('COMMIT');
		} catch (e) {
			if (q.parser && !q.parser.finished) {
				// a stream cut short leaves the connection mid-protocol: it is not used again
				q.abandon();
				connection._invalid = true;
			} else if (began) {
				await connection.query('ROLLBACK').catch(() => (connection._invalid = true));
			}
			throw e;
		}
	});
	return levels;
}

interface LevelRow {
	level: number;
	entries: string | null;
	withheld: string | number;
	version: string | number | null;
}

/**
 * The lineage's JSON bytes from its levels: the ancestors (level 0) and each level's entries, whose
 * text ends before the last entry's level.
 */
function lineageBody(code: string, depth: number | null, rows: Level[]): { body: Buffer; version: number } {
	const levels = [...rows].sort((a, b) => a.level - b.level);
	if (levels[0]?.level !== 0) throw new Error('the lineage query gave no ancestors row');
	let withheld = 0;
	const parts: Buffer[] = [Buffer.from('{"code":"' + code + '","ancestors":['), levels[0].entries ?? Buffer.alloc(0), Buffer.from('],"descendants":[')];
	let first = true;
	for (const r of levels) {
		withheld += r.withheld;
		if (r.level === 0 || !r.entries?.length) continue;
		if (!first) parts.push(COMMA);
		parts.push(r.entries, Buffer.from(',"level":' + r.level + '}'));
		first = false;
	}
	parts.push(Buffer.from('],"withheld":' + withheld + ',"depth":' + (depth === null ? 'null' : String(depth)) + '}'));
	return { body: Buffer.concat(parts), version: Number(levels[0].version) };
}
const COMMA = Buffer.from(',');

/**
 * Ancestors (root first) and descendants (by level) of an item in one query: a root's whole tree as
 * one range of the tree index (rootLevels), any other item's subtree walked level by level
 * (LINEAGE_SQL), with each entry's JSON text kept by the database.
 * `depth` limits the descendant levels (a tree opened one level at a time); every
 * entry carries its number of children so the tree knows what can be opened. Lab members see
 * only the entries their lab holds; the rest are counted as withheld. An answer computed at the
 * collection's current lineage_version is served from memory (see `cache`); the query reads the
 * version in its own snapshot, so what is kept is exactly what that version means.
 */
export async function lineageJson(sq: Sequelize, who: Who, codeText: string, depth: number | null = null): Promise<string> {
	return (await lineageBytes(sq, who, codeText, depth)).toString('utf8');
}

/** lineageJson's answer as the UTF-8 bytes sent: what is kept, so a repeat answer is not encoded again. */
export async function lineageBytes(sq: Sequelize, who: Who, codeText: string, depth: number | null = null): Promise<Buffer> {
	const item = await findItem(sq, who, codeText);
	const lab = labFilter(who);
	const key = `${item.id}/${depth ?? ''}/${lab ?? ''}`;
	const kept = cache.get(key);
	if (kept && kept.version === Number(item.lineage_version)) {
		// most recently used goes last
		cache.delete(key);
		cache.set(key, kept);
		return kept.body;
	}
	const levels =
		item.parent_id === null
			? await rootLevels(sq, item.id, depth, lab, item.collection_id)
			: (await preparedRead<LevelRow>(sq, LINEAGE_SQL, { id: item.id, depth, lab, collection: item.collection_id })).map((r) => ({
					level: r.level,
					entries: r.entries === null ? null : Buffer.from(r.entries, 'utf8'),
					withheld: Number(r.withheld),
					version: r.version === null ? null : Number(r.version)
				}));
	const { body, version } = lineageBody(item.code, depth, levels);
	remember(key, version, body);
	return body;
}

interface LedgerRow {
	seq: number;
	at: Date;
	kind: string;
	delta_ug: number;
	running_ug: number;
	balance_after_ug: number;
	u_after_ug: number | null;
	split_id: string | null;
	counterpart_code: string | null;
	note: string;
	actor: string | null;
	balance_name: string | null;
}

/** The item's ledger in order, with the running balance summed in SQL and the recorded uncertainty. */
export async function ledger(sq: Sequelize, who: Who, codeText: string, found?: ItemRow) {
	const item = found ?? (await findItem(sq, who, codeText));
	const rows = await sq.query<LedgerRow>(
		`SELECT e.seq, e.at, e.kind, e.delta_ug, (sum(e.delta_ug) OVER (ORDER BY e.seq))::bigint AS running_ug, e.balance_after_ug,
		        e.u_after_ug, e.split_id, k.code AS counterpart_code, e.note, u.name AS actor, b.name AS balance_name
		 FROM ledger_entries e
		 LEFT JOIN items k ON k.id = e.counterpart_id
		 LEFT JOIN users u ON u.id = e.actor_id
		 LEFT JOIN weighings w ON w.id = e.weighing_id
		 LEFT JOIN balances b ON b.id = w.balance_id
		 WHERE e.item_id = :id ORDER BY e.seq`,
		{ type: QueryTypes.SELECT, replacements: { id: item.id } }
	);
	const entries = rows.map((r) => ({
		seq: r.seq,
		at: new Date(r.at).toISOString(),
		kind: r.kind,
		deltaUg: r.delta_ug,
		balanceUg: r.running_ug,
		uUg: r.u_after_ug,
		expandedUg: r.u_after_ug === null ? null : 2 * r.u_after_ug,
		splitId: r.split_id,
		counterpartCode: r.counterpart_code,
		balanceName: r.balance_name,
		note: r.note,
		actor: r.actor ?? 'system',
		// the stored running balance must agree with the sum of the entries
		consistent: r.running_ug === r.balance_after_ug
	}));
	const closing = entries.length ? entries[entries.length - 1].balanceUg : 0;
	return { code: item.code, massUg: item.mass_ug, entries, closes: closing === item.mass_ug && entries.every((e) => e.consistent) };
}
