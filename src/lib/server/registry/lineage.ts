import { QueryTypes, type Sequelize } from 'sequelize';
import { labFilter } from '../auth/scope';
import { findItem, type ItemRow, type Who } from './common';

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
	const [row] = await sq.query<{ body: string; version: number }>(
		`WITH RECURSIVE up AS (
			SELECT id, parent_id, code, serial, kind, state, mass_ug, initial_mass_ug, holder_lab_id, 0 AS level FROM items WHERE id = :id
			UNION ALL
			SELECT p.id, p.parent_id, p.code, p.serial, p.kind, p.state, p.mass_ug, p.initial_mass_ug, p.holder_lab_id, up.level - 1
			FROM items p JOIN up ON p.id = up.parent_id
		), down AS (
			SELECT id, code, NULL::text AS parent_code, serial, kind, state, mass_ug, initial_mass_ug, holder_lab_id, 0 AS level FROM items WHERE id = :id
			UNION ALL
			SELECT c.id, c.code, down.code, c.serial, c.kind, c.state, c.mass_ug, c.initial_mass_ug, c.holder_lab_id, down.level + 1
			FROM items c JOIN down ON c.parent_id = down.id
			WHERE :depth::int IS NULL OR down.level < :depth::int
		), kids AS (
			SELECT parent_code, count(*) AS n FROM down WHERE level > 0 GROUP BY parent_code
		), tree AS (
			SELECT 'a' AS side, u.id, u.code, pa.code AS parent_code, u.serial, u.kind, u.state, u.mass_ug, u.initial_mass_ug, u.holder_lab_id, u.level,
			       (SELECT count(*) FROM items k WHERE k.parent_id = u.id) AS children
			FROM up u LEFT JOIN items pa ON pa.id = u.parent_id WHERE u.level < 0
			UNION ALL
			SELECT 'd', d.id, d.code, d.parent_code, d.serial, d.kind, d.state, d.mass_ug, d.initial_mass_ug, d.holder_lab_id, d.level,
			       CASE WHEN d.level = :depth::int THEN (SELECT count(*) FROM items k WHERE k.parent_id = d.id) ELSE coalesce(kids.n, 0) END
			FROM down d LEFT JOIN kids ON kids.parent_code = d.code WHERE d.level > 0
		), rows AS (
			-- each entry's JSON text put together here: json_build_object costs several times more per
			-- object. Text goes through to_json (escaped as JSON wants); kind and state are the
			-- items table's CHECKed words, and the numbers are integers
			SELECT t.side, t.level, t.serial, t.holder_lab_id,
			       '{"code":' || to_json(t.code)::text || ',"parentCode":' || coalesce(to_json(t.parent_code)::text, 'null') ||
			       ',"level":' || t.level || ',"kind":"' || t.kind || '","state":"' || t.state || '","massUg":' || t.mass_ug ||
			       ',"initialMassUg":' || t.initial_mass_ug || ',"holder":' || CASE WHEN l.name IS NULL THEN '"Facility"' ELSE to_json(l.name)::text END ||
			       ',"children":' || t.children || '}' AS entry
			FROM tree t LEFT JOIN labs l ON l.id = t.holder_lab_id
		)
		SELECT '{"code":' || to_json(CAST(:code AS text))::text ||
			',"ancestors":[' || coalesce((SELECT string_agg(entry, ',' ORDER BY level) FROM rows WHERE side = 'a' AND (:lab::uuid IS NULL OR holder_lab_id = :lab::uuid)), '') ||
			'],"descendants":[' || coalesce((SELECT string_agg(entry, ',' ORDER BY level, serial) FROM rows WHERE side = 'd' AND (:lab::uuid IS NULL OR holder_lab_id = :lab::uuid)), '') ||
			'],"withheld":' || (SELECT count(*) FROM rows WHERE :lab::uuid IS NOT NULL AND holder_lab_id IS DISTINCT FROM :lab::uuid) ||
			',"depth":' || coalesce(CAST(:depth AS int)::text, 'null') || '}' AS body,
		(SELECT lineage_version FROM collections WHERE id = :collection) AS version`,
		{ type: QueryTypes.SELECT, replacements: { id: item.id, code: item.code, depth, lab, collection: item.collection_id } }
	);
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
