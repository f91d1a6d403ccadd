import { QueryTypes, type Sequelize } from 'sequelize';
import type { SessionUser } from '../auth/types';
import { createRequest, startReview } from '../custody/requests';
import { recordSession } from '../handling/sessions';
import { splitItem } from '../registry/split';
import { whoFrom } from '../registry/common';

async function codeOf(sq: Sequelize, sql: string, replacements: Record<string, unknown> = {}): Promise<string> {
	const [r] = await sq.query<{ code: string }>(sql, { type: QueryTypes.SELECT, replacements });
	return r.code;
}

const plan = (what: string) => `${what}. Sub-sampling under nitrogen, extraction and measurement with replicate procedural blanks carried alongside.`;
const why = (what: string) => `${what}; the piece size is the smallest that keeps replicate results above the blank-derived limits.`;

/**
 * Requests in review that show the allocation planner's cases (DESIGN §3.11), made through the
 * app's own services:
 * - a simple single split (HLF, one piece, no constraints);
 * - one that only a deeper aliquot can serve: HLF fragment F2 is split twice, then F2, its first
 *   aliquot and fragment F1 are photographed on the open bench (ambient air, within HLF's limit);
 *   the grand-aliquots were split off before, and every other HLF piece met cleanroom air, so a
 *   request for glovebox-only material never exposed to ambient air is served by those alone;
 * - one with no possible plan: two pieces larger than those grand-aliquots under the same constraints;
 * - a two-piece request from TRN, never exposed to ambient air.
 * Item codes are read from the database, never written here.
 */
export async function seedPlannerDemo(sq: Sequelize, curator: SessionUser, fennick: SessionUser, marrow: SessionUser) {
	const who = whoFrom(curator);
	const hlf = (offset: number) =>
		codeOf(sq, `SELECT i.code FROM items i JOIN collections c ON c.id = i.collection_id WHERE c.prefix = 'HLF' AND i.kind = 'specimen' AND i.parent_id IS NULL ORDER BY i.serial OFFSET :o LIMIT 1`, { o: offset });
	const [mb] = await sq.query<{ id: string }>(`SELECT id FROM balances WHERE active AND calibration_due >= current_date ORDER BY readability_ug DESC LIMIT 1`, { type: QueryTypes.SELECT });
	const f1 = await hlf(1);
	const f2 = await hlf(2);
	const [{ mass_ug: f2Mass }] = await sq.query<{ mass_ug: number }>('SELECT mass_ug FROM items WHERE code = :c', { type: QueryTypes.SELECT, replacements: { c: f2 } });
	const chip = await splitItem(sq, who, f2, { children: [{ massUg: 1_200_000, container: 'PTFE jar', description: 'Chip of fragment F2 for the glovebox store' }], ...(mb ? { balanceId: mb.id, parentAfterUg: Number(f2Mass) - 1_200_000 - 60 } : {}) });
	const chipCode = chip.children[0].code as string;
	await splitItem(sq, who, chipCode, {
		children: [30_000, 28_000].map((massUg) => ({ massUg, container: 'PTFE vial, crimp-sealed', description: 'Powder from the F2 chip, sealed in the nitrogen glovebox' })),
		...(mb ? { balanceId: mb.id, parentAfterUg: 1_200_000 - 58_000 - 20 } : {})
	});
	// after those splits: a short bench session in ambient air (HLF allows up to 240 min)
	const start = new Date(Date.now() + 1_000);
	await recordSession(sq, who, {
		items: [f1, chipCode, f2], atmosphere: 'ambient_air', start: start.toISOString(), end: new Date(start.getTime() + 8 * 60_000).toISOString(),
		temperatureC: 21.8, humidityPct: 39, purpose: 'Photography of fragments F1 and F2 and the F2 chip on the open bench',
		notes: 'Within the collection’s ambient-air limit; the sealed powders stayed in the glovebox'
	});

	const ask = (u: SessionUser, collection: string, massUg: number, what: string, extra: { pieces?: number; constraints?: Record<string, unknown> } = {}) =>
		createRequest(sq, u, {
			collection, massUg, analysisPlan: plan(what), techniques: ['chiral GC-MS'], destructive: true, returnPlan: 'Residue returned in its vial', justification: why(what), submit: true,
			...(extra.pieces ? { pieces: extra.pieces } : {}), ...(extra.constraints ? { constraints: extra.constraints } : {})
		});
	const glovebox = { neverAmbient: true, maxMinutes: { cleanroom_air: 0 } };
	const simple = await ask(marrow, 'HLF', 2_500, 'Nitrogen isotopes of the insoluble organic matter');
	const deep = await ask(fennick, 'HLF', 5_000, 'Amino acids of matrix never exposed to laboratory air', { constraints: glovebox });
	const none = await ask(fennick, 'HLF', 300_000, 'Bulk soluble organics of glovebox-only matrix, two replicate extractions', { pieces: 2, constraints: glovebox });
	const two = await ask(fennick, 'TRN', 2_000, 'Duplicate enantiomer measurements of cell 2 fines', { pieces: 2, constraints: { neverAmbient: true } });
	for (const id of [simple, deep, none, two]) await startReview(sq, curator, id);
}
