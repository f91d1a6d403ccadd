import { QueryTypes, type Sequelize } from 'sequelize';
import { exposure, type HandlingSessionInput, type Lineage } from '../../domain/exposure';
import { rulesOf } from '../../domain/handling';
import { canSeeLab } from '../auth/scope';
import { findItem, type Who } from '../registry/common';
import { SESSION_SELECT, sessionView, type CollectionRow, type SessionRow } from './rows';

// Exposure reports of items (DESIGN.md §3.5–3.6): the sessions along each item's lineage read from
// the database, the computation itself in domain/exposure.ts.

/** A session as domain/exposure.ts takes it: items and blanks by code. */
function exposureInput(s: SessionRow): HandlingSessionInput {
	return {
		id: s.id,
		atmosphere: s.atmosphere,
		start: s.started_at,
		end: s.ended_at,
		itemIds: s.items.map((i) => i.code),
		blanks: s.blanks.map((b) => ({ blankId: b.code, analysed: b.analysed }))
	};
}

/**
 * Every handling session of one collection as exposure() takes it, with the collection's rules,
 * for computing many items' exposure at once (the offer, the planner).
 */
export async function collectionExposureInputs(sq: Sequelize, collectionId: string) {
	const sessions = await sq.query<SessionRow>(`${SESSION_SELECT} WHERE s.collection_id = :id ORDER BY s.started_at`, { type: QueryTypes.SELECT, replacements: { id: collectionId } });
	const [col] = await sq.query<CollectionRow>('SELECT id, prefix, allowed_atmospheres, allowed_contact_materials, max_air_exposure_min FROM collections WHERE id = :id', {
		type: QueryTypes.SELECT, replacements: { id: collectionId }
	});
	return { sessions: sessions.map(exposureInput), rules: rulesOf(col.allowed_atmospheres, col.max_air_exposure_min) };
}

interface PathRow {
	item_id: string;
	start_id: string;
	code: string;
	level: number;
	split_at: Date | null;
}

/**
 * Exposure reports (DESIGN.md §3.5–3.6, computed by domain/exposure.ts) for several items of one
 * collection at once: each item's path to its parent specimen with the split times, and every
 * session on any item of those paths, fetched in two queries.
 */
async function exposures(sq: Sequelize, ids: string[], collectionId: string) {
	const paths = await sq.query<PathRow>(
		`WITH RECURSIVE up AS (
			SELECT i.id AS item_id, i.id AS start_id, i.parent_id, i.split_id, 0 AS level FROM items i WHERE i.id IN (:ids)
			UNION ALL
			SELECT p.id, up.start_id, p.parent_id, p.split_id, up.level + 1 FROM items p JOIN up ON p.id = up.parent_id
		)
		SELECT up.item_id, up.start_id, i.code, up.level, sp.at AS split_at
		FROM up JOIN items i ON i.id = up.item_id LEFT JOIN splits sp ON sp.id = up.split_id ORDER BY up.start_id, up.level`,
		{ type: QueryTypes.SELECT, replacements: { ids } }
	);
	const all = [...new Set(paths.map((p) => p.item_id))];
	const sessions = await sq.query<SessionRow>(
		`${SESSION_SELECT} WHERE EXISTS (SELECT 1 FROM handling_session_items x WHERE x.session_id = s.id AND x.item_id IN (:all)) ORDER BY s.started_at`,
		{ type: QueryTypes.SELECT, replacements: { all } }
	);
	const [col] = await sq.query<CollectionRow>('SELECT id, prefix, allowed_atmospheres, allowed_contact_materials, max_air_exposure_min FROM collections WHERE id = :id', {
		type: QueryTypes.SELECT, replacements: { id: collectionId }
	});
	const rules = rulesOf(col.allowed_atmospheres, col.max_air_exposure_min);
	const inputs: HandlingSessionInput[] = sessions.map(exposureInput);
	const out = new Map<string, ReturnType<typeof exposure>>();
	for (const id of ids) {
		const path = paths.filter((p) => p.start_id === id);
		// the parent's cut-off is when the item was split off; the grandparent's, when the parent was; …
		const lineage: Lineage = {
			itemId: path[0].code,
			ancestors: path.slice(1).map((p, k) => ({ itemId: p.code, childSplitAt: path[k].split_at ?? new Date(0) }))
		};
		out.set(id, exposure(lineage, inputs, rules));
	}
	return { reports: out, sessions: sessions.map(sessionView), rules, prefix: col.prefix };
}

interface SplitFlagRow {
	id: string;
	at: Date;
	parent_code: string;
	role: 'origin' | 'parent';
	children: string[];
}

/** Splits made from or into the item that name no handling session. */
async function splitsWithoutSession(sq: Sequelize, itemId: string) {
	const rows = await sq.query<SplitFlagRow>(
		`SELECT sp.id, sp.at, p.code AS parent_code, CASE WHEN sp.parent_id = :id THEN 'parent' ELSE 'origin' END AS role,
		        (SELECT coalesce(array_agg(k.code ORDER BY k.serial), '{}') FROM items k WHERE k.split_id = sp.id) AS children
		 FROM splits sp JOIN items p ON p.id = sp.parent_id
		 WHERE sp.handling_session_id IS NULL AND (sp.parent_id = :id OR sp.id = (SELECT split_id FROM items WHERE id = :id))
		 ORDER BY sp.at`,
		{ type: QueryTypes.SELECT, replacements: { id: itemId } }
	);
	return rows.map((r) => ({ splitId: r.id, at: new Date(r.at).toISOString(), parentCode: r.parent_code, role: r.role, children: r.children, flag: 'no handling session on record' as const }));
}

/**
 * GET /api/items/{code}/exposure: the item's exposure report, the sessions behind it, its splits
 * without a session on record, and flags for each item along its lineage (ancestors and direct
 * aliquots), so the lineage tree can show where the rules were broken or blanks are missing.
 */
export async function itemExposure(sq: Sequelize, who: Who, codeText: string) {
	const item = await findItem(sq, who, codeText);
	const related = await sq.query<{ id: string; code: string; holder_lab_id: string | null; relation: string }>(
		`WITH RECURSIVE up AS (
			SELECT parent_id AS id FROM items WHERE id = :id
			UNION ALL SELECT p.parent_id FROM items p JOIN up ON p.id = up.id WHERE p.parent_id IS NOT NULL
		)
		SELECT i.id, i.code, i.holder_lab_id, 'ancestor' AS relation FROM items i WHERE i.id IN (SELECT id FROM up)
		UNION ALL SELECT i.id, i.code, i.holder_lab_id, 'aliquot' FROM items i WHERE i.parent_id = :id`,
		{ type: QueryTypes.SELECT, replacements: { id: item.id } }
	);
	const visible = related.filter((r) => canSeeLab(who, r.holder_lab_id));
	const { reports, sessions, rules, prefix } = await exposures(sq, [item.id, ...visible.map((r) => r.id)], item.collection_id);
	const report = reports.get(item.id)!;
	const shown = new Set(report.sessions.map((s) => s.sessionId));
	const unsplit = await splitsWithoutSession(sq, item.id);
	const flagsOf = (id: string) => {
		const r = reports.get(id)!;
		return { violations: r.violations.length, uncovered: r.coverage.uncovered.length, coverage: r.coverage.share };
	};
	return {
		code: item.code,
		collection: prefix,
		rules,
		report,
		sessions: sessions.filter((s) => shown.has(s.id)),
		splitsWithoutSession: unsplit,
		lineageFlags: [
			...visible.filter((r) => r.relation === 'ancestor').map((r) => ({ code: r.code, relation: 'ancestor', ...flagsOf(r.id) })),
			{ code: item.code, relation: 'self', ...flagsOf(item.id) },
			...visible.filter((r) => r.relation === 'aliquot').map((r) => ({ code: r.code, relation: 'aliquot', ...flagsOf(r.id) }))
		]
	};
}
