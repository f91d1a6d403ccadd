import { QueryTypes, type Sequelize } from 'sequelize';
import { labFilter } from '../auth/scope';
import { findItem, type ItemRow, type Who } from './common';
import { preparedRead } from '../prepared';

/**
 * Lineages already computed, by item, depth and lab, with the collection's lineage_version they
 * were computed at (migration 0051): while the version is unchanged the answer is the same, so it
 * is served again without the recursive query. Least recently used first out, within a byte budget.
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
 * The lineage's one recursive query. Ancestors come up the parent links one row per step (there are
 * few). Descendants come down one level per step (`lv`): the next level is one range of
 * items_tree_level_idx (same tree, depth + 1, migration 0054) joined by hash with the level above,
 * and the range one further down counted by parent gives each entry its number of children. Each
 * step also writes its entries' JSON text, in serial order, so the answer is the levels' texts
 * joined. Lab members see only the entries their lab holds; the rest are counted as withheld.
 * The text is put together by hand (json_build_object costs several times more per object): text
 * that may need escaping goes through to_json; codes are letters, digits and hyphens (a CHECK of
 * migration 0054), kind and state are the items table's CHECKed words, and the numbers are integers.
 */
const LINEAGE_SQL = `WITH RECURSIVE up AS (
		SELECT id, parent_id, code, serial, kind, state, mass_ug, initial_mass_ug, holder_lab_id, 0 AS level FROM items WHERE id = :id
		UNION ALL
		SELECT p.id, p.parent_id, p.code, p.serial, p.kind, p.state, p.mass_ug, p.initial_mass_ug, p.holder_lab_id, up.level - 1
		FROM items p JOIN up ON p.id = up.parent_id
	), lab AS (
		SELECT id, to_json(name)::text AS name FROM labs
	), anc AS (
		SELECT u.level, u.holder_lab_id,
		       '{"code":"' || u.code || '","parentCode":' || coalesce('"' || pa.code || '"', 'null') || ',"level":' || u.level ||
		       ',"kind":"' || u.kind || '","state":"' || u.state || '","massUg":' || u.mass_ug || ',"initialMassUg":' || u.initial_mass_ug ||
		       ',"holder":' || coalesce(l.name, '"Facility"') || ',"children":' || (SELECT count(*) FROM items k WHERE k.parent_id = u.id) || '}' AS entry
		FROM up u LEFT JOIN items pa ON pa.id = u.parent_id LEFT JOIN lab l ON l.id = u.holder_lab_id
		WHERE u.level < 0
	), lv AS (
		SELECT 0 AS level, i.depth, i.root_id, ARRAY[i.id] AS ids, ARRAY[i.code] AS codes, NULL::text AS entries, 0::bigint AS withheld
		FROM items i WHERE i.id = :id
		UNION ALL
		SELECT lv.level + 1, lv.depth + 1, lv.root_id, n.ids, n.codes, n.entries, n.withheld
		FROM lv, LATERAL (
			SELECT array_agg(c.id) AS ids, array_agg(c.code) AS codes,
			       string_agg('{"code":"' || c.code || '","parentCode":"' || p.code || '","level":' || (lv.level + 1) ||
			                  ',"kind":"' || c.kind || '","state":"' || c.state || '","massUg":' || c.mass_ug || ',"initialMassUg":' || c.initial_mass_ug ||
			                  ',"holder":' || coalesce(l.name, '"Facility"') || ',"children":' || coalesce(k.n, 0) || '}', ',' ORDER BY c.serial)
			              FILTER (WHERE CAST(:lab AS uuid) IS NULL OR c.holder_lab_id = CAST(:lab AS uuid)) AS entries,
			       count(*) FILTER (WHERE CAST(:lab AS uuid) IS NOT NULL AND c.holder_lab_id IS DISTINCT FROM CAST(:lab AS uuid)) AS withheld
			FROM items c
			JOIN unnest(lv.ids, lv.codes) AS p (id, code) ON c.parent_id = p.id
			LEFT JOIN (SELECT g.parent_id, count(*) AS n FROM items g WHERE g.root_id = lv.root_id AND g.depth = lv.depth + 2 GROUP BY g.parent_id) k
			       ON k.parent_id = c.id
			LEFT JOIN lab l ON l.id = c.holder_lab_id
			WHERE c.root_id = lv.root_id AND c.depth = lv.depth + 1
		) n
		WHERE cardinality(lv.ids) > 0 AND (CAST(:depth AS int) IS NULL OR lv.level < CAST(:depth AS int))
	)
	SELECT '{"code":"' || CAST(:code AS text) ||
		'","ancestors":[' || coalesce((SELECT string_agg(entry, ',' ORDER BY level) FROM anc WHERE CAST(:lab AS uuid) IS NULL OR holder_lab_id = CAST(:lab AS uuid)), '') ||
		'],"descendants":[' || coalesce((SELECT string_agg(entries, ',' ORDER BY level) FROM lv WHERE level > 0 AND entries <> ''), '') ||
		'],"withheld":' || ((SELECT count(*) FROM anc WHERE CAST(:lab AS uuid) IS NOT NULL AND holder_lab_id IS DISTINCT FROM CAST(:lab AS uuid)) + (SELECT sum(withheld) FROM lv)) ||
		',"depth":' || coalesce(CAST(:depth AS int)::text, 'null') || '}' AS body,
		(SELECT lineage_version FROM collections WHERE id = CAST(:collection AS uuid)) AS version`;

/**
 * Ancestors (root first) and descendants (by level) of an item through one recursive query,
 * with the answer's JSON text built by PostgreSQL (a tree of 10,000 items stays one round trip and
 * one string). `depth` limits the descendant levels (a tree opened one level at a time); every
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
	const [row] = await preparedRead<{ body: string; version: number }>(sq, LINEAGE_SQL, { id: item.id, code: item.code, depth, lab, collection: item.collection_id });
	const body = Buffer.from(row.body, 'utf8');
	remember(key, Number(row.version), body);
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
