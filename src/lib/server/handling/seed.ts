import { QueryTypes, type Sequelize } from 'sequelize';
import { appendTrail } from '../trail';
import { trailActor, type Who } from '../registry/common';
import { registerSpecimen } from '../registry/items';
import { attachSession, recordSession } from './sessions';

/** Contact materials and tools on the Brightwater benches (invented); one per collection is not allowed there. */
const CATALOGUE: Record<string, { name: string; kind: 'material' | 'tool'; material: string }[]> = {
	TRN: [
		{ name: 'PTFE-tipped tweezers', kind: 'tool', material: 'PTFE' },
		{ name: 'Spatula, 316L', kind: 'tool', material: 'stainless steel 316L' },
		{ name: 'Fused silica dish', kind: 'material', material: 'fused silica' },
		{ name: 'Nitrile outer gloves', kind: 'material', material: 'nitrile' }
	],
	HLF: [
		{ name: 'Diamond wire saw', kind: 'tool', material: 'diamond wire' },
		{ name: 'PTFE sheet', kind: 'material', material: 'PTFE' },
		{ name: 'Nitrile gloves', kind: 'material', material: 'nitrile' },
		{ name: 'Aluminium foil wrap', kind: 'material', material: 'aluminium foil' }
	],
	ICE: [
		{ name: 'PTFE window holder', kind: 'tool', material: 'PTFE' },
		{ name: 'Gold foil wrap', kind: 'material', material: 'gold foil' }
	]
};

async function codeOf(sq: Sequelize, sql: string, replacements: Record<string, unknown> = {}): Promise<string> {
	const [r] = await sq.query<{ code: string }>(sql, { type: QueryTypes.SELECT, replacements });
	return r.code;
}

const ago = (minutes: number) => new Date(Date.now() - minutes * 60_000).toISOString();

/**
 * Catalogue, witness coupons, handling sessions and one blank analysis for the demo trees
 * (DESIGN §5), with one rule broken (ambient air beyond ICE's limit) and one session without a
 * blank (HLF), so the item pages show their flags. Idempotent: the catalogue by name, the rest only
 * while no handling session is on record.
 */
export async function seedHandling(sq: Sequelize, log: (s: string) => void = () => {}) {
	for (const [prefix, entries] of Object.entries(CATALOGUE)) {
		for (const e of entries) {
			await sq.query(
				`INSERT INTO contact_catalogue (collection_id, name, kind, material) SELECT id, :name, :kind, :material FROM collections WHERE prefix = :prefix
				 ON CONFLICT (collection_id, lower(name)) DO NOTHING`,
				{ replacements: { ...e, prefix } }
			);
		}
	}
	if ((await sq.query('SELECT 1 FROM handling_sessions LIMIT 1', { type: QueryTypes.SELECT })).length) return;
	const [curator] = await sq.query<{ id: string; email: string }>(`SELECT id, email FROM users WHERE email = 'curator@brightwater.example'`, { type: QueryTypes.SELECT });
	if (!curator) return;
	const who: Who = { id: curator.id, label: curator.email, role: 'curator', labId: null };
	const first = (prefix: string, kind: string, offset = 0) =>
		codeOf(sq, `SELECT i.code FROM items i JOIN collections c ON c.id = i.collection_id WHERE c.prefix = :prefix AND i.kind = :kind ORDER BY i.serial OFFSET :offset LIMIT 1`, { prefix, kind, offset });

	const coupons: string[] = [];
	for (const n of [1, 2]) {
		const b = await registerSpecimen(sq, who, {
			collection: 'TRN', kind: 'blank', massUg: 1, description: `Witness coupon W${n}, fused silica, opened beside the regolith`,
			container: 'Coupon case', storagePlace: 'Nitrogen cabinet N2-1, shelf 3'
		});
		coupons.push(b.code);
	}
	const cell1 = await first('TRN', 'specimen');
	const aliquotA1 = await codeOf(sq, `SELECT k.code FROM items k JOIN items p ON p.id = k.parent_id WHERE p.code = :c ORDER BY k.serial LIMIT 1`, { c: cell1 });
	const opening = await recordSession(sq, who, {
		items: [cell1], atmosphere: 'nitrogen_glovebox', start: ago(300), end: ago(180), temperatureC: 21.4, humidityPct: 0.3,
		contacts: ['PTFE-tipped tweezers', 'Fused silica dish'], blanks: [coupons[0]], purpose: 'Cell 1 opening and first aliquots'
	});
	await recordSession(sq, who, {
		items: [aliquotA1], atmosphere: 'nitrogen_glovebox', start: ago(150), end: ago(120), temperatureC: 21.1, humidityPct: 0.2,
		contacts: ['Spatula, 316L'], blanks: [coupons[1]], purpose: 'Subsampling for the amino-acid request'
	});
	await sq.transaction(async (t) => {
		const [b] = await sq.query<{ id: string }>('SELECT id FROM items WHERE code = :c', { type: QueryTypes.SELECT, replacements: { c: coupons[0] }, transaction: t });
		const [a] = await sq.query<{ id: string }>(
			`INSERT INTO blank_analyses (blank_item_id, summary, recorded_by) VALUES (:b, 'Amino-acid blank run on witness coupon W1: all analytes below LOQ', :u) RETURNING id`,
			{ type: QueryTypes.SELECT, replacements: { b: b.id, u: curator.id }, transaction: t }
		);
		await appendTrail(sq, t, { actor: trailActor(who), action: 'blank.analysis_recorded', subjectType: 'item', subjectId: b.id, after: { code: coupons[0], analysisId: a.id } });
	});
	const [split] = await sq.query<{ id: string }>(
		`SELECT sp.id FROM splits sp JOIN items p ON p.id = sp.parent_id WHERE p.code = :c ORDER BY sp.at LIMIT 1`,
		{ type: QueryTypes.SELECT, replacements: { c: cell1 } }
	);
	if (split) await attachSession(sq, who, split.id, { sessionId: opening.id });

	// HLF: cutting in cleanroom air with no blank alongside (an uncovered session)
	await recordSession(sq, who, {
		items: [await first('HLF', 'specimen')], atmosphere: 'cleanroom_air', start: ago(420), end: ago(380), temperatureC: 20.5, humidityPct: 38,
		contacts: ['Diamond wire saw', 'PTFE sheet'], purpose: 'Cutting chips from the main mass'
	});
	// ICE: run 12 in vacuum and argon with the procedural blank; run 7 left in ambient air past the limit
	const iceBlank = await first('ICE', 'blank');
	const run12 = await first('ICE', 'specimen', 2);
	await recordSession(sq, who, { items: [run12], atmosphere: 'vacuum', start: ago(600), end: ago(480), blanks: [iceBlank], contacts: ['PTFE window holder'], purpose: 'Residue recovery from the vacuum chamber' });
	await recordSession(sq, who, { items: [run12], atmosphere: 'argon_glovebox', start: ago(470), end: ago(440), temperatureC: 19.8, humidityPct: 0.5, blanks: [iceBlank], purpose: 'Pooling windows for the split' });
	await recordSession(sq, who, {
		items: [await first('ICE', 'specimen', 0)], atmosphere: 'ambient_air', start: ago(260), end: ago(235), temperatureC: 22.9, humidityPct: 41,
		contacts: ['Gold foil wrap'], purpose: 'Window holder swap; the argon can was not at hand', notes: 'Exposure over the collection limit, reported to the curation lead'
	});
	log('demo handling sessions, witness coupons and contact catalogue present');
}

