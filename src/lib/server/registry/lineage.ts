import { QueryTypes, type Sequelize } from 'sequelize';
import { canSeeLab } from '../auth/scope';
import { findItem, type Who } from './common';

interface LineageRow {
	side: 'ancestor' | 'descendant';
	level: number;
	code: string;
	parent_code: string | null;
	kind: string;
	state: string;
	mass_ug: number;
	initial_mass_ug: number;
	holder_lab_id: string | null;
	holder_name: string | null;
	child_count: number | null;
}

/**
 * Ancestors (root first) and descendants (by level) of an item through one recursive query.
 * `depth` limits the descendant levels (for a tree opened one level at a time); nodes on the
 * last level fetched carry their own child count so the tree knows what can be opened.
 * Lab members see only the entries their lab holds; the rest are counted as withheld.
 */
export async function lineage(sq: Sequelize, who: Who, codeText: string, depth: number | null = null) {
	const item = await findItem(sq, who, codeText);
	const rows = await sq.query<LineageRow>(
		`WITH RECURSIVE up AS (
			SELECT id, parent_id, 0 AS level FROM items WHERE id = :id
			UNION ALL
			SELECT p.id, p.parent_id, up.level - 1 FROM items p JOIN up ON p.id = up.parent_id
		), down AS (
			SELECT id, 0 AS level FROM items WHERE id = :id
			UNION ALL
			SELECT c.id, down.level + 1 FROM items c JOIN down ON c.parent_id = down.id
			WHERE :depth::int IS NULL OR down.level < :depth::int
		), tree AS (
			SELECT 'ancestor' AS side, id, level FROM up WHERE level < 0
			UNION ALL
			SELECT 'descendant', id, level FROM down WHERE level > 0
		)
		SELECT tree.side, tree.level, i.code, p.code AS parent_code, i.kind, i.state, i.mass_ug, i.initial_mass_ug,
		       i.holder_lab_id, l.name AS holder_name,
		       CASE WHEN tree.level = :depth::int THEN (SELECT count(*)::int FROM items k WHERE k.parent_id = i.id) END AS child_count
		FROM tree JOIN items i ON i.id = tree.id
		LEFT JOIN items p ON p.id = i.parent_id
		LEFT JOIN labs l ON l.id = i.holder_lab_id
		ORDER BY tree.side, tree.level, i.serial`,
		{ type: QueryTypes.SELECT, replacements: { id: item.id, depth } }
	);
	const counts = new Map<string, number>();
	for (const r of rows) if (r.side === 'descendant' && r.parent_code) counts.set(r.parent_code, (counts.get(r.parent_code) ?? 0) + 1);
	const view = (r: LineageRow) => ({
		code: r.code,
		parentCode: r.parent_code,
		level: r.level,
		kind: r.kind,
		state: r.state,
		massUg: r.mass_ug,
		initialMassUg: r.initial_mass_ug,
		holder: r.holder_name ?? 'Facility',
		children: r.child_count ?? counts.get(r.code) ?? 0
	});
	const visible = rows.filter((r) => canSeeLab(who, r.holder_lab_id));
	return {
		code: item.code,
		ancestors: visible.filter((r) => r.side === 'ancestor').map(view),
		descendants: visible.filter((r) => r.side === 'descendant').map(view),
		withheld: rows.length - visible.length,
		depth
	};
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
export async function ledger(sq: Sequelize, who: Who, codeText: string) {
	const item = await findItem(sq, who, codeText);
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
