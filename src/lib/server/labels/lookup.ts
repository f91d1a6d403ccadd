/**
 * What goes on an item's label, read from the registry's tables (migration 0010: items,
 * collections, weighings, balances; labs; settings; transfers for the coolant an item travels with). Lab members see only items their lab holds;
 * anything out of sight is reported as missing, exactly like an unknown code.
 */
import { QueryTypes } from 'sequelize';
import { db } from '../db';
import { labCondition } from '../auth/scope';
import type { SessionUser } from '../auth/types';
import { expanded, decimalsForReadability } from '../../domain/mass';
import { handlingMark, hazardMark, labelMark } from '../../domain/labels';
import { facilityName } from '../facility';
import type { LabelData } from './render';

/** The most labels one request may print (about 34 A4 sheets). */
export const MAX_BATCH = 1000;

interface LabelRow {
	code: string;
	mass_ug: number;
	mass_u_ug: number | null;
	created_at: Date;
	prefix: string;
	collection_name: string;
	allowed_atmospheres: string[];
	max_air_exposure_min: number | null;
	lab_name: string | null;
	readability_ug: string | null;
	storage_place: string | null;
	/** coolant of a transfer the item is on that has not arrived yet */
	coolant: string | null;
}

export function labelFromRow(r: LabelRow, facility: string): LabelData {
	const readability = r.readability_ug === null ? null : Number(r.readability_ug);
	const mark = handlingMark({ allowedAtmospheres: r.allowed_atmospheres ?? [], maxAirExposureMin: r.max_air_exposure_min });
	return {
		code: r.code,
		collection: `${r.prefix} · ${r.collection_name}`,
		massUg: r.mass_ug,
		// the registry keeps the standard uncertainty u; the label shows U = k·u, k = 2 (JCGM 100:2008, 6.2–6.3)
		expandedUg: r.mass_u_ug === null ? null : expanded(r.mass_u_ug),
		decimals: readability && readability > 0 ? decimalsForReadability(readability) : 3,
		date: r.created_at,
		holder: r.lab_name ?? facility,
		mark: labelMark(mark, hazardMark({ storagePlace: r.storage_place, coolant: r.coolant }))
	};
}

/**
 * Label data for `codes` (already checked with parseCode), in the order asked, each code once.
 * `missing` lists the codes that are unknown or out of the user's sight.
 */
export async function findLabels(user: SessionUser, codes: readonly string[]): Promise<{ labels: LabelData[]; missing: string[] }> {
	const unique = [...new Set(codes)];
	if (unique.length === 0) return { labels: [], missing: [] };
	const replacements: Record<string, unknown> = { codes: unique };
	const scope = labCondition(user, 'i.holder_lab_id', replacements);
	const rows = await db().query<LabelRow>(
		`SELECT i.code, i.mass_ug, i.mass_u_ug, i.created_at, c.prefix, c.name AS collection_name,
		        c.allowed_atmospheres, c.max_air_exposure_min, l.name AS lab_name, i.storage_place,
		        (SELECT x.coolant FROM transfer_items ti JOIN transfers x ON x.id = ti.transfer_id
		          WHERE ti.item_id = i.id AND x.state IN ('prepared', 'dispatched') ORDER BY x.created_at DESC LIMIT 1) AS coolant,
		        (SELECT b.readability_ug::text FROM weighings w JOIN balances b ON b.id = w.balance_id
		          WHERE w.item_id = i.id ORDER BY w.at DESC LIMIT 1) AS readability_ug
		   FROM items i
		   JOIN collections c ON c.id = i.collection_id
		   LEFT JOIN labs l ON l.id = i.holder_lab_id
		  WHERE i.code IN (:codes)${scope}`,
		{ type: QueryTypes.SELECT, replacements }
	);
	const facility = await facilityName();
	const byCode = new Map(rows.map((r) => [r.code, r]));
	const labels: LabelData[] = [];
	const missing: string[] = [];
	for (const code of unique) {
		const r = byCode.get(code);
		if (r) labels.push(labelFromRow(r, facility));
		else missing.push(code);
	}
	return { labels, missing };
}

/** True when the item exists and the user may see it (lab members: held by their lab). */
export async function itemVisible(user: SessionUser, code: string): Promise<boolean> {
	const replacements: Record<string, unknown> = { code };
	const scope = labCondition(user, 'i.holder_lab_id', replacements);
	const rows = await db().query(`SELECT 1 FROM items i WHERE i.code = :code${scope}`, { type: QueryTypes.SELECT, replacements });
	return rows.length > 0;
}
